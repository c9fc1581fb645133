package solve

import (
	"errors"
	"fmt"
	"math"
	"strings"
)

// Status says how a solve ended.
type Status int

const (
	Converged            Status = iota // the scaled residual met FTol
	IterationLimit                     // MaxIter steps without converging
	LineSearchFailed                   // no step along the Newton direction reduced the residual
	SingularJacobian                   // the Jacobian had no acceptable pivot
	HitBound                           // the Newton step points through a bound the iterate sits on
	EvalFailed                         // the residual could not be evaluated (log of a negative, ...)
	StructurallySingular               // the equations cannot fix the unknowns, whatever the values
	HomotopyFailed                     // the homotopy path could not be followed to t = 1
	Canceled                           // the context was cancelled
)

var statusNames = [...]string{
	Converged:            "converged",
	IterationLimit:       "iteration limit",
	LineSearchFailed:     "line search failed",
	SingularJacobian:     "singular Jacobian",
	HitBound:             "hit bound",
	EvalFailed:           "residual evaluation failed",
	StructurallySingular: "structurally singular",
	HomotopyFailed:       "homotopy failed",
	Canceled:             "canceled",
}

func (s Status) String() string {
	if s >= 0 && int(s) < len(statusNames) {
		return statusNames[s]
	}
	return fmt.Sprintf("Status(%d)", int(s))
}

// Err returns nil for Converged and an error naming the status otherwise.
func (s Status) Err() error {
	if s == Converged {
		return nil
	}
	return errors.New("solve: " + s.String())
}

// Worst is one equation with a large residual at the point a solve stopped.
type Worst struct {
	Equation string  // the equation's name
	Residual float64 // its residual, SI
	Scaled   float64 // divided by the equation's scale (the size of its terms)
}

// NotConverged is the error returned when a solve fails. It names what an
// engineer needs to look at.
type NotConverged struct {
	Status        Status
	Iterations    int     // Newton iterations spent, all methods together
	Norm          float64 // scaled residual (max norm) at the returned point
	Worst         []Worst // the equations with the largest scaled residuals, largest first
	WorstUnknowns []string
	Reason        string // what stopped the last method, e.g. "singular Jacobian at unknown x[3]"
	Hint          string // what to check
	Err           error  // an underlying error (an evaluation error), or nil
}

func (e *NotConverged) Error() string {
	var b strings.Builder
	fmt.Fprintf(&b, "solve: no operating point found after %d iterations: %s", e.Iterations, e.Reason)
	if !math.IsNaN(e.Norm) && !math.IsInf(e.Norm, 0) {
		fmt.Fprintf(&b, "; scaled residual %.3g", e.Norm)
	}
	if len(e.Worst) > 0 {
		b.WriteString("; largest residuals in ")
		for i, w := range e.Worst {
			if i > 0 {
				b.WriteString(", ")
			}
			fmt.Fprintf(&b, "%s (%.3g)", w.Equation, w.Residual)
		}
	}
	if len(e.WorstUnknowns) > 0 {
		b.WriteString("; unknowns involved: " + strings.Join(e.WorstUnknowns, ", "))
	}
	if e.Hint != "" {
		b.WriteString(". " + e.Hint)
	}
	return b.String()
}

func (e *NotConverged) Unwrap() error { return e.Err }
