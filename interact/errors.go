package interact

import (
	"errors"
	"fmt"
	"math"
)

var (
	errSVD  = errors.New("interact: singular value decomposition failed to converge")
	errZero = errors.New("interact: the gain matrix is zero: no input moves any output")
)

// SingularError reports a gain matrix too close to singular for the analysis
// asked of it: some combination of outputs cannot be moved independently by
// the inputs.
type SingularError struct {
	What string  // the matrix: "K", "Fx (dF/dx)", "the paired sub-matrix of y1, y2"
	Cond float64 // its condition number, +Inf when exactly singular
}

func (e *SingularError) Error() string {
	if math.IsInf(e.Cond, 1) {
		return fmt.Sprintf("interact: %s is singular", e.What)
	}
	return fmt.Sprintf("interact: %s is singular or near-singular (condition number %.4g)", e.What, e.Cond)
}
