package jacobian

import (
	"fmt"

	"github.com/loopwright/loopwright/model"
)

// EvalError is a NaN or an infinity, reported at the formula position that
// produced it.
type EvalError struct {
	Pos      model.Pos
	Equation string // name of the equation, output, define or check
	Kind     string // "equation", "output", "define" or "check"
	Op       string // "log", "sqrt", "/", "^", ...
	Msg      string // "log of a non-positive value (-0.2)"
}

// Error prints the error as
//
//	model.yaml:31:18: log of a non-positive value (-0.2) in equation "sugar"
func (e *EvalError) Error() string {
	kind := e.Kind
	if kind == "" {
		kind = "equation"
	}
	s := fmt.Sprintf("%s in %s %q", e.Msg, kind, e.Equation)
	if e.Pos == (model.Pos{}) {
		return "jacobian: " + s
	}
	return e.Pos.String() + ": " + s
}
