package sparse_test

import (
	"fmt"

	"github.com/loopwright/loopwright/solve/sparse"
)

func ExampleFactorize() {
	// A 3×3 matrix with a zero in the (1,1) position, so the elimination
	// has to pivot:
	//	[0 2 0]
	//	[1 1 0]
	//	[0 1 4]
	a := &sparse.CSR{
		Rows: 3, Cols: 3,
		RowPtr: []int{0, 1, 3, 5},
		ColIdx: []int{1, 0, 1, 1, 2},
		Val:    []float64{2, 1, 1, 1, 4},
	}
	lu, err := sparse.Factorize(a, nil)
	if err != nil {
		fmt.Println(err)
		return
	}
	x := []float64{4, 3, 10} // solved in place
	lu.Solve(x, x)
	fmt.Println("x =", x)
	fmt.Printf("cond1 ≈ %.3g (exact: 4.5; the estimate is a lower bound)\n", lu.Cond1())
	// Output:
	// x = [1 2 2]
	// cond1 ≈ 4 (exact: 4.5; the estimate is a lower bound)
}
