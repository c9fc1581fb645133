package solve

import (
	"context"
	"fmt"
	"math"
	"slices"

	"github.com/loopwright/loopwright/jacobian"
	"github.com/loopwright/loopwright/model"
)

// ProblemFor builds the Problem of finding the operating point of sys,
// compiled as prog, with the parameter vector p (inputs and disturbances
// included; copied). The Jacobian pattern comes from prog.Pattern(); bounds
// are the unknowns' Min and Max; the typical size of each unknown is its
// guess (|Value|), else derived from its bounds; names are the model's.
//
// sys must be square (as many equations as unknowns). The Problem evaluates through one jacobian.Eval of its own: it must not
// be used by two solves at the same time (build one per goroutine).
func ProblemFor(prog *jacobian.Program, sys *model.System, p []float64) *Problem {
	n := prog.NumUnknowns()
	if len(sys.Unknowns) != n || len(sys.Equations) != prog.NumEquations() || len(p) != prog.NumParams() {
		panic("solve: ProblemFor: program, system and parameters do not fit")
	}
	if prog.NumEquations() != n {
		panic("solve: ProblemFor: the system is not square (Operating reports this as an error)")
	}
	pat := prog.Pattern()
	ev := prog.NewEval()
	jac := prog.NewJacobian()
	pp := slices.Clone(p)
	prob := &Problem{
		N:      n,
		RowPtr: pat.RowPtr,
		ColIdx: pat.ColIdx,
		Residual: func(f, x []float64) error {
			return ev.Residual(f, x, pp)
		},
		ResidualJacobian: func(f, jval, x []float64) error {
			jac.Val = jval
			return ev.ResidualJacobian(f, jac, x, pp)
		},
	}
	for _, u := range sys.Unknowns {
		prob.Lower = append(prob.Lower, u.Min)
		prob.Upper = append(prob.Upper, u.Max)
		typ := math.Abs(u.Value)
		if math.IsInf(typ, 0) || math.IsNaN(typ) {
			typ = 0
		}
		prob.Typical = append(prob.Typical, typ)
		prob.VarNames = append(prob.VarNames, u.Name)
	}
	for _, e := range sys.Equations {
		prob.EqNames = append(prob.EqNames, e.Name)
	}
	prob.FormatValue = func(j int, v float64) string {
		u := sys.Unknowns[j].Unit
		if u.Text == "" {
			return fmt.Sprintf("%g", v)
		}
		return fmt.Sprintf("%g %s", u.FromSI(v), u.Text)
	}
	return prob
}

// Guess returns the unknowns' starting guesses from the model.
func Guess(sys *model.System) []float64 {
	x := make([]float64, len(sys.Unknowns))
	for j, u := range sys.Unknowns {
		x[j] = u.Value
	}
	return x
}

// Params returns the parameter vector at the model's nominal values.
func Params(sys *model.System) []float64 {
	p := make([]float64, len(sys.Params))
	for k, s := range sys.Params {
		p[k] = s.Value
	}
	return p
}

// Operating finds the operating point of sys at parameters p (nil: the
// nominal values), starting from x0 (nil: the model's guesses). It is
// ProblemFor followed by Newton, after checking that the system is square.
func Operating(ctx context.Context, prog *jacobian.Program, sys *model.System, p, x0 []float64, opts *Options) (*Result, error) {
	if p == nil {
		p = Params(sys)
	}
	if x0 == nil {
		x0 = Guess(sys)
	}
	if m, n := len(sys.Equations), len(sys.Unknowns); m != n {
		return nil, &NotConverged{Status: StructurallySingular, Norm: math.NaN(),
			Reason: fmt.Sprintf("the model has %d equations for %d unknowns", m, n),
			Hint:   fmt.Sprintf("%s: a steady-state model needs as many equations as variables", sys.File)}
	}
	return Newton(ctx, ProblemFor(prog, sys, p), x0, opts)
}
