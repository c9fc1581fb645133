package structure_test

import (
	"fmt"

	"github.com/loopwright/loopwright/solve/structure"
)

// The syrup dilution of model-format.md (an invented scenario): the total
// balance fixes f_out alone, then the sugar balance fixes s_out.
func ExampleAnalyze() {
	names := []string{"f_out", "s_out"}
	eqs := [][]int{
		{0},    // total: f_out = f_conc + f_water
		{0, 1}, // sugar: f_out*s_out = f_conc*s_conc + f_water*s_water
	}
	s := structure.Analyze(eqs, len(names))
	fmt.Println("singular:", s.Singular(), "rank:", s.Rank)
	for i, b := range s.Blocks {
		fmt.Printf("block %d: equations %v solve for %s\n", i, b.Equations, names[b.Unknowns[0]])
	}
	// Output:
	// singular: false rank: 2
	// block 0: equations [0] solve for f_out
	// block 1: equations [1] solve for s_out
}
