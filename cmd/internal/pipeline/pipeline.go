// Package pipeline wires the numerical packages together for the commands:
// compile an expanded model, find its operating point, derive its gains and
// analyse them. It holds no numerics of its own; it only calls jacobian,
// solve and interact in order and classifies their errors for exit codes.
package pipeline

import (
	"context"
	"errors"
	"fmt"

	"gonum.org/v1/gonum/mat"

	"github.com/loopwright/loopwright/cmd/internal/cli"
	"github.com/loopwright/loopwright/interact"
	"github.com/loopwright/loopwright/jacobian"
	"github.com/loopwright/loopwright/model"
	"github.com/loopwright/loopwright/solve"
)

// Options choose how the operating point is found.
type Options struct {
	// FD makes Newton use central finite differences instead of the exact
	// Jacobian (a cross-check; --jacobian fd).
	FD bool
	// Solve are the solver settings; nil means defaults.
	Solve *solve.Options
}

// Point is a converged operating point with everything needed to report it.
type Point struct {
	Sys    *model.System
	Prog   *jacobian.Program
	X, P   []float64 // unknowns and parameters, SI
	Result *solve.Result

	Outputs []float64 // values of Sys.Outputs, SI
	Defines []float64 // values of Sys.Defines, SI
	// CheckWarnings are the model's range checks that the solution violates.
	CheckWarnings []model.Warning
}

// Compile compiles sys, classifying a failure as bad input.
func Compile(sys *model.System) (*jacobian.Program, error) {
	prog, err := jacobian.Compile(sys)
	if err != nil {
		return nil, &cli.InputError{Err: err}
	}
	return prog, nil
}

// Operate compiles sys and solves for its operating point from the model's
// guesses at its nominal parameters. A solver failure comes back as a
// *cli.FindingError wrapping *solve.NotConverged (whose text names the worst
// equations and unknowns); the partial result is returned with it.
func Operate(ctx context.Context, sys *model.System, opts *Options) (*Point, error) {
	if opts == nil {
		opts = &Options{}
	}
	prog, err := Compile(sys)
	if err != nil {
		return nil, err
	}
	pt := &Point{Sys: sys, Prog: prog, P: solve.Params(sys)}
	prob := solve.ProblemFor(prog, sys, pt.P)
	if opts.FD {
		useFiniteDifferences(prob, prog, pt.P)
	}
	res, err := solve.Newton(ctx, prob, solve.Guess(sys), opts.Solve)
	pt.Result = res
	if res != nil {
		pt.X = res.X
	}
	if err != nil {
		if ctx.Err() != nil {
			return pt, fmt.Errorf("%w: %v", cli.ErrInterrupted, err)
		}
		var nc *solve.NotConverged
		if errors.As(err, &nc) {
			return pt, &cli.FindingError{Err: err}
		}
		return pt, err
	}
	if err := pt.evaluate(); err != nil {
		return pt, err
	}
	return pt, nil
}

// evaluate computes outputs, defines and range checks at the solution.
func (pt *Point) evaluate() error {
	ev := pt.Prog.NewEval()
	pt.Outputs = make([]float64, len(pt.Sys.Outputs))
	if err := ev.Outputs(pt.Outputs, pt.X, pt.P); err != nil {
		return &cli.FindingError{Err: fmt.Errorf("at the operating point: %w", err)}
	}
	pt.Defines = make([]float64, len(pt.Sys.Defines))
	if err := ev.Defines(pt.Defines, pt.X, pt.P); err != nil {
		return &cli.FindingError{Err: fmt.Errorf("at the operating point: %w", err)}
	}
	vals := make([]float64, len(pt.Sys.Checks))
	if len(vals) > 0 {
		if err := ev.Checks(vals, pt.X, pt.P); err != nil {
			return &cli.FindingError{Err: fmt.Errorf("at the operating point: %w", err)}
		}
	}
	for i, c := range pt.Sys.Checks {
		v := vals[i]
		if v >= c.Min && v <= c.Max {
			continue
		}
		u := c.Unit
		msg := fmt.Sprintf("check %q: %s = %.6g %s lies outside [%.6g, %.6g] %s",
			c.Name, c.Name, u.FromSI(v), u.Text, u.FromSI(c.Min), u.FromSI(c.Max), u.Text)
		if c.Note != "" {
			msg += " (" + c.Note + ")"
		}
		pt.CheckWarnings = append(pt.CheckWarnings, model.Warning{Pos: c.Pos, Msg: msg})
	}
	return nil
}

// Gains returns the steady-state gain matrices at the point, in
// engineering units.
func (pt *Point) Gains() (*interact.GainSet, error) {
	g, err := interact.Gains(pt.Prog, pt.Sys, pt.X, pt.P)
	if err != nil {
		return nil, &cli.FindingError{Err: err}
	}
	g.Source = fmt.Sprintf("model %s (%s) at its operating point", pt.Sys.Name, pt.Sys.File)
	return g, nil
}

// Analyze runs the interaction analysis on g, classifying its failures as
// findings (a singular gain matrix is a property of the process, not a
// mistake in the input).
func Analyze(g *interact.GainSet, opts *interact.Options) (*interact.Analysis, error) {
	a, err := interact.Analyze(g, opts)
	if err != nil {
		var se *interact.SingularError
		if errors.As(err, &se) {
			return nil, &cli.FindingError{Err: err}
		}
		return nil, &cli.InputError{Err: err}
	}
	return a, nil
}

// useFiniteDifferences replaces the problem's exact Jacobian by central
// differences (for --jacobian fd).
func useFiniteDifferences(prob *solve.Problem, prog *jacobian.Program, p []float64) {
	ev := prog.NewEval()
	n := prob.N
	dense := mat.NewDense(n, n, nil)
	prob.ResidualJacobian = func(f, jval, x []float64) error {
		if err := ev.Residual(f, x, p); err != nil {
			return err
		}
		if err := ev.JacobianFD(dense, x, p); err != nil {
			return err
		}
		k := 0
		for i := 0; i < n; i++ {
			for q := prob.RowPtr[i]; q < prob.RowPtr[i+1]; q++ {
				jval[k] = dense.At(i, prob.ColIdx[q])
				k++
			}
		}
		return nil
	}
}
