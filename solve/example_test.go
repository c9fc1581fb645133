package solve_test

import (
	"context"
	"fmt"
	"math"

	"github.com/loopwright/loopwright/solve"
)

// A two-unknown blend, written by hand (an invented scenario): a product
// stream f = f1 + f2 with sugar fraction s from f·s = 0.65·f1, at f1 = 800
// and f2 = 4200 kg/h. Unknowns: f (index 0) and s (index 1).
func ExampleNewton() {
	const f1, f2 = 800.0, 4200.0
	prob := &solve.Problem{
		N:      2,
		RowPtr: []int{0, 1, 3},
		ColIdx: []int{0, 0, 1}, // total: f; sugar: f and s
		Residual: func(r, x []float64) error {
			r[0] = x[0] - (f1 + f2)
			r[1] = x[0]*x[1] - 0.65*f1
			return nil
		},
		ResidualJacobian: func(r, j, x []float64) error {
			r[0] = x[0] - (f1 + f2)
			r[1] = x[0]*x[1] - 0.65*f1
			j[0], j[1], j[2] = 1, x[1], x[0]
			return nil
		},
		Lower:    []float64{0, 0},
		Upper:    []float64{math.Inf(1), 1},
		VarNames: []string{"f", "s"},
		EqNames:  []string{"total", "sugar"},
	}
	res, err := solve.Newton(context.Background(), prob, []float64{1000, 0.5}, nil)
	if err != nil {
		fmt.Println(err)
		return
	}
	fmt.Printf("%s by %s in %d blocks: f = %.1f kg/h, s = %.4f\n", res.Status, res.Method, res.Blocks, res.X[0], res.X[1])
	// Output:
	// converged by newton+blocks in 2 blocks: f = 5000.0 kg/h, s = 0.1040
}

// A specification that cannot be met: x² + 1 = 0. The error names the
// equation and the unknown and says what to check.
func ExampleNotConverged() {
	prob := &solve.Problem{
		N: 1, RowPtr: []int{0, 1}, ColIdx: []int{0},
		Residual: func(r, x []float64) error { r[0] = x[0]*x[0] + 1; return nil },
		ResidualJacobian: func(r, j, x []float64) error {
			r[0], j[0] = x[0]*x[0]+1, 2*x[0]
			return nil
		},
		VarNames: []string{"x"},
		EqNames:  []string{"circle"},
	}
	_, err := solve.Newton(context.Background(), prob, []float64{1}, &solve.Options{NoHomotopy: true})
	if nc, ok := err.(*solve.NotConverged); ok {
		fmt.Println(nc.Status)
		fmt.Println(nc.Worst[0].Equation, nc.WorstUnknowns)
		fmt.Println(nc.Hint)
	}
	// Output:
	// singular Jacobian
	// circle [x]
	// Check that the specifications fix the unknowns named (a flow or a composition may have gone to zero), and their starting guesses
}

// Solving a sequence of nearby problems without allocating per solve (an
// invented scenario: the blend of ExampleNewton at three water rates, each
// solve starting from the last solution). The point is written into the
// caller's storage: a caller that keeps each point hands each solve storage
// of its own, as here.
func ExampleSolver_SolveInto() {
	const f1 = 800.0
	f2 := 4200.0
	prob := &solve.Problem{
		N:      2,
		RowPtr: []int{0, 1, 3},
		ColIdx: []int{0, 0, 1},
		Residual: func(r, x []float64) error {
			r[0] = x[0] - (f1 + f2)
			r[1] = x[0]*x[1] - 0.65*f1
			return nil
		},
		ResidualJacobian: func(r, j, x []float64) error {
			r[0] = x[0] - (f1 + f2)
			r[1] = x[0]*x[1] - 0.65*f1
			j[0], j[1], j[2] = 1, x[1], x[0]
			return nil
		},
		Lower: []float64{0, 0},
		Upper: []float64{math.Inf(1), 1},
	}
	sol := solve.NewSolver(prob)
	sol.KeepPivots = true
	opts := &solve.Options{NoBlocks: true, NoHomotopy: true, MaxIter: 8}
	points := make([]float64, 3*2) // one backing array for the three points
	var res solve.Result
	x := []float64{5000, 0.1}
	for k, water := range []float64{4000, 4200, 4400} {
		f2 = water
		res.X = points[2*k : 2*k+2]
		if err := sol.SolveInto(context.Background(), &res, x, opts); err != nil {
			fmt.Println(err)
			return
		}
		x = res.X
		fmt.Printf("f2 = %.0f: f = %.0f kg/h, s = %.5f in %d iterations\n", water, res.X[0], res.X[1], res.Iterations)
	}
	fmt.Println(points[0] != points[2])
	// Output:
	// f2 = 4000: f = 4800 kg/h, s = 0.10833 in 2 iterations
	// f2 = 4200: f = 5000 kg/h, s = 0.10400 in 2 iterations
	// f2 = 4400: f = 5200 kg/h, s = 0.10000 in 2 iterations
	// true
}
