package solve

import (
	"fmt"
	"io"
)

// Printer returns a Recorder that writes one line per iteration to w, in
// columns: method, block, homotopy t, iteration, scaled residual, scaled
// step, step length. It is meant for a --trace flag; write errors are
// ignored.
func Printer(w io.Writer) func(Iteration) {
	header := false
	return func(it Iteration) {
		if !header {
			fmt.Fprintf(w, "%-14s %5s %7s %4s %11s %11s %9s\n", "method", "block", "t", "iter", "residual", "step", "alpha")
			header = true
		}
		block := "-"
		if it.Block >= 0 {
			block = fmt.Sprint(it.Block + 1)
		}
		fmt.Fprintf(w, "%-14s %5s %7.4g %4d %11.3e %11.3e %9.3g\n",
			it.Method, block, it.T, it.Iter, it.ScaledResidualNorm, it.StepNorm, it.Alpha)
	}
}
