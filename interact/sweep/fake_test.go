package sweep

import (
	"context"
	"errors"
	"fmt"
	"math"
)

// The tests here use a small invented plant instead of a compiled model, so
// that the engine is tested apart from the solver: two parameters a and b,
// gain matrix K = [[1, a], [b, 1]], so λ11 = 1/(1 - a b), which changes
// sign across the curve a b = 1. The "solver" takes more iterations the
// farther its start is from the answer, and its answer keeps a trace of the
// start far below the printed digits, so any change in continuation order
// shows up in the records' bytes.

var fakeOutputs = []Quantity{{Name: "y1", Unit: "kg/h"}, {Name: "y2"}}
var fakeInputs = []Quantity{{Name: "u1", Unit: "kg/h"}, {Name: "u2", Unit: "kg/h"}}

type fakeWorker struct {
	calls   *int // when set, counts points (for the cancelling test)
	fail    func(p []float64) bool
	outside func(p []float64) []string // the checks a point is outside of
}

func (w *fakeWorker) Point(ctx context.Context, p []float64, from State, rec *Record) (State, error) {
	x0 := from.X
	if err := ctx.Err(); err != nil {
		return State{}, err
	}
	a, b := p[0], p[1]
	target := a * b
	dist := math.Abs(target - x0[0])
	it := 1
	for d := dist; d > 1e-3; d /= 10 {
		it++
	}
	rec.Iterations = it
	if w.fail != nil && w.fail(p) {
		return State{}, errors.New("Newton: no convergence after 50 iterations (residual 3.1e-2 in \"sugar\")")
	}
	x := []float64{target + 1e-15*x0[0]}
	k := []float64{1, a, b, 1}
	det := 1 - a*b
	l := 1 / det
	rec.Outputs = []float64{x[0], 2 * x[0]}
	rec.K = k
	rec.RGA = []float64{l, 1 - l, 1 - l, l}
	rec.Det = det + 1e-15*x0[0]
	rec.Cond = math.Abs((1 + math.Max(math.Abs(a), math.Abs(b))) / det)
	rec.NI = []float64{det, det / (a * b)}
	rec.Pass = []bool{l >= 0.5 && l < 10, 1-l >= 0.5 && 1-l < 10}
	switch {
	case rec.Pass[0]:
		rec.Best = "y1:u1 y2:u2"
	case rec.Pass[1]:
		rec.Best = "y1:u2 y2:u1"
	}
	if w.outside != nil {
		rec.Outside = w.outside(p)
	}
	if w.calls != nil {
		*w.calls++
	}
	return State{X: x}, nil
}

// fakeProblem sweeps a over [0.2, 1.6] and b over [0.1, 1.1] (display units;
// a is shown in percent of its SI value to exercise unit conversion).
func fakeProblem(design Design, na, nb int) *Problem {
	axes := []Axis{
		{Name: "a", Param: 0, From: 0.2, To: 1.6, Points: na, Nominal: 0.5, Unit: "%", Scale: 0.01},
		{Name: "b", Param: 1, From: 0.1, To: 1.1, Points: nb, Nominal: 0.5},
	}
	plan, err := NewPlan(axes, design)
	if err != nil {
		panic(err)
	}
	h := &Header{
		Format: FormatVersion, Model: "fake", Axes: axes, Design: design, Total: plan.Len(),
		Outputs: fakeOutputs, Inputs: fakeInputs,
		Pairings: []Pairing{
			{Label: "P1", Name: "y1:u1 y2:u2", Role: "nominal best", Input: []int{0, 1}},
			{Label: "P2", Name: "y1:u2 y2:u1", Role: "alternative", Input: []int{1, 0}},
		},
		Caution: "Steady-state screening only (invented test plant).",
	}
	h.Seal(fmt.Sprintf("fake model %d", 1))
	return &Problem{
		Header: h, Plan: plan, Nominal: []float64{0.5, 0.5}, Start: []float64{0.25},
		NewWorker: func() Worker { return &fakeWorker{} },
	}
}
