package sweep

import (
	"context"
	"crypto/sha256"
	"encoding/hex"
	"fmt"
	"math"
	"slices"
	"strconv"
	"strings"

	"gonum.org/v1/gonum/blas/blas64"
	"gonum.org/v1/gonum/mat"

	"github.com/loopwright/loopwright/interact"
	"github.com/loopwright/loopwright/jacobian"
	"github.com/loopwright/loopwright/model"
	"github.com/loopwright/loopwright/solve"
	"github.com/loopwright/loopwright/solve/sparse"
)

// ModelOptions say how to sweep a model. The zero value sweeps the model's
// envelope on a full grid with the default solver settings.
type ModelOptions struct {
	// Axes replaces the model's envelope when not empty.
	Axes []Axis
	// Design lays out the points; zero means a full grid.
	Design Design
	// Pairings are requested pairings of interest besides the nominal best
	// (each Pairing[i] is the input of output i). For systems of up to 3
	// loops every pairing is of interest anyway.
	Pairings []interact.Pairing
	// Solver settings for every point; nil means the defaults.
	Solver *solve.Options
	// Analysis settings for every point; nil means the defaults.
	Analysis *interact.Options
	// ModelID identifies the model text for the fingerprint beside its
	// expanded equations (the file's bytes, say); may be empty.
	ModelID string

	// generalOutputs turns off the shortcut for outputs that are plain
	// unknowns (tests compare the two).
	generalOutputs bool
}

// EnvelopeAxes converts the model's envelope into sweep axes.
func EnvelopeAxes(sys *model.System) []Axis {
	var out []Axis
	for _, e := range sys.Envelope {
		out = append(out, AxisFor(sys, e.Param, e.From, e.To, e.Points, e.Log))
	}
	return out
}

// AxisFor makes a sweep axis over parameter slot k of sys, From and To in SI.
func AxisFor(sys *model.System, k int, from, to float64, points int, log bool) Axis {
	s := sys.Params[k]
	return Axis{Name: s.Name, Param: k, From: from, To: to, Points: points, Log: log,
		Nominal: s.Value, Unit: s.Unit.Text, Scale: s.Unit.DiffScale(), Offset: s.Unit.Offset}
}

// FromModel prepares a sweep of a compiled model: it solves the nominal
// point (from the model's guesses), analyses it to find the nominal-best
// pairing, and returns the Problem with its header sealed.
func FromModel(ctx context.Context, sys *model.System, prog *jacobian.Program, opts *ModelOptions) (*Problem, error) {
	if opts == nil {
		opts = &ModelOptions{}
	}
	no, ni := len(sys.Outputs), len(sys.Inputs)
	if no == 0 || ni == 0 {
		return nil, fmt.Errorf("%s: a sweep analyses gains: the model needs outputs and inputs (it has %d and %d)", sys.File, no, ni)
	}
	if no != ni {
		return nil, fmt.Errorf("%s: a sweep needs as many outputs as inputs (the model has %d outputs, %d inputs)", sys.File, no, ni)
	}
	axes := opts.Axes
	if len(axes) == 0 {
		axes = EnvelopeAxes(sys)
	}
	if len(axes) == 0 {
		return nil, fmt.Errorf("%s: the model has no envelope: add one to the file or give --axis", sys.File)
	}
	plan, err := NewPlan(axes, opts.Design)
	if err != nil {
		return nil, err
	}
	m := &modelRun{sys: sys, prog: prog, opts: opts}
	for _, ax := range axes {
		m.axes = append(m.axes, ax.Param)
		span := math.Abs(ax.To - ax.From)
		if !(span > 0) || math.IsInf(span, 0) {
			span = 1
		}
		m.axisSpan = append(m.axisSpan, span)
	}
	m.init()
	nominal := make([]float64, len(sys.Params))
	for k, s := range sys.Params {
		nominal[k] = s.Value
	}
	guess := make([]float64, len(sys.Unknowns))
	for j, s := range sys.Unknowns {
		guess[j] = s.Value
	}
	w := m.newWorker()
	w.p = nominal
	res, err := w.sol.Solve(ctx, guess, opts.Solver)
	if err != nil {
		return nil, fmt.Errorf("the nominal point does not solve, so there is nothing to continue from: %w", err)
	}
	start := res.X
	a, _, err := w.analyse(start, nominal, w.plainOutputs(start))
	if err != nil {
		return nil, fmt.Errorf("the nominal point: %w", err)
	}
	startTangent := w.tangent(make([]float64, w.tangentSize(State{}, nil)), nominal, State{}, nil)
	m.pivots = w.sol.Pivots()
	if w.lu != nil {
		m.gainsLU = new(sparse.LU)
		m.gainsLU.CopyFrom(w.lu)
	}

	h := &Header{Format: FormatVersion, Model: sys.Name, Axes: axes, Design: opts.Design, Total: plan.Len(),
		Outputs: m.outputs, Inputs: m.inputs, Caution: interact.Caution}
	var interest []interact.Pairing
	add := func(p interact.Pairing, role string) {
		for _, q := range interest {
			if slices.Equal(p, q) {
				return
			}
		}
		interest = append(interest, p)
		h.Pairings = append(h.Pairings, Pairing{Label: "P" + strconv.Itoa(len(interest)),
			Name: PairingName(m.outputs, m.inputs, p), Role: role, Input: append([]int(nil), p...)})
	}
	if best := bestOf(a); best != nil {
		add(slices.Clone(best.Pairs), "nominal best")
	}
	for _, p := range opts.Pairings {
		if len(p) != no {
			return nil, fmt.Errorf("pairing %v: needs one input for each of %d outputs", p, no)
		}
		add(p, "requested")
	}
	if no <= 3 {
		for p := range interact.Pairings(no) {
			add(slices.Clone(p), "alternative")
		}
	}
	m.interest = interest
	for _, p := range h.Pairings {
		m.pairNames = append(m.pairNames, p.Name)
	}
	h.Seal(opts.ModelID + "\x00" + systemID(sys))
	prob := &Problem{Header: h, Plan: plan, Nominal: nominal, Start: start, StartTangent: startTangent,
		NewWorker: func() Worker { return m.newWorker() }}
	if err := solveHeads(ctx, prob, w); err != nil {
		return nil, err
	}
	return prob, nil
}

// solveHeads solves the first point of every chain of a grid with two or
// more axes before the chains run, by continuation along the first axis
// from the chain nearest the nominal point outwards, and stores them as the
// problem's Heads. On a grid the chains' first points lie on one line, so
// this walk takes one or two Newton iterations a point, where starting each
// chain from the nominal state takes five or six. It is done once, in order,
// by one worker: the heads, and so the records, do not depend on -j or on
// the shard.
func solveHeads(ctx context.Context, prob *Problem, w Worker) error {
	plan := prob.Plan
	if plan.Design.Kind != Grid || len(plan.Axes) < 2 || len(plan.Chains) < 2 {
		return nil
	}
	heads := make([]*Head, len(plan.Chains))
	first := func(c int) int { return plan.Chains[c][0].Point }
	near, best := 0, math.Inf(1)
	for c := range plan.Chains {
		if d := math.Abs(plan.Point(first(c))[0] - plan.Axes[0].Nominal); d < best {
			near, best = c, d
		}
	}
	p := slices.Clone(prob.Nominal)
	start := State{X: prob.Start, Tangent: prob.StartTangent, ChainStart: true}
	recs := &recordMaker{prob: prob} // the heads' records are kept: no pool
	walk := func(cs []int, from State) {
		fromStart := from.X == nil
		if fromStart {
			from = start
		}
		for _, c := range cs {
			if ctx.Err() != nil {
				return
			}
			i := first(c)
			for a, ax := range plan.Axes {
				p[ax.Param] = plan.Point(i)[a]
			}
			rec, st := solvePoint(ctx, prob, w, recs, p, i, from, fromStart)
			h := &Head{Record: rec}
			if st.X != nil {
				h.State = st
				h.State.ChainStart = true // each chain's worker starts afresh
				from, fromStart = st, false
			}
			heads[c] = h
		}
	}
	var up, down []int
	for c := near; c < len(plan.Chains); c++ {
		up = append(up, c)
	}
	for c := near - 1; c >= 0; c-- {
		down = append(down, c)
	}
	walk(up, State{})
	if h := heads[near]; h != nil && h.State.X != nil {
		back := h.State
		back.ChainStart = false
		walk(down, back)
	} else {
		walk(down, State{})
	}
	if err := ctx.Err(); err != nil {
		return err
	}
	prob.Heads = heads
	return nil
}

// bestOf is the best-ranked pairing that is not rejected (it may carry
// cautions), or nil when every pairing is rejected.
func bestOf(a *interact.Analysis) *interact.PairingResult {
	if len(a.Pairings) > 0 && a.Pairings[0].Verdict != interact.Rejected {
		return &a.Pairings[0]
	}
	return nil
}

func passes(v interact.Verdict) bool { return v == interact.Recommended || v == interact.Acceptable }

// modelRun is what the workers of one model sweep share (read only).
type modelRun struct {
	sys               *model.System
	prog              *jacobian.Program
	opts              *ModelOptions
	outputs           []Quantity
	inputs            []Quantity
	signalsO          []interact.Signal
	signalsI          []interact.Signal
	outScale          []float64 // SI per display unit (differences)
	outOffset, outDiv []float64 // of each output's unit, as model.Unit.FromSI uses them
	// outVar[i] is the unknown that output i is, when every output is a
	// plain unknown (nil otherwise): then an output's value is that
	// unknown's and its gradient a unit row, with no evaluation.
	outVar   []int
	inScale  []float64
	lower    []float64
	upper    []float64
	pattern  *jacobian.Sparse
	interest []interact.Pairing
	names    []string
	eqNames  []string

	pairNames []string      // names of the pairings of interest
	pivots    *solve.Pivots // of the nominal solve, where every chain starts
	gainsLU   *sparse.LU    // the factorisation of the Jacobian at the nominal point
	axes      []int         // parameter slot of each sweep axis
	axisSpan  []float64
	pcols     []int // the inputs, then the axes: columns of dF/dp at each point
}

func (m *modelRun) init() {
	sys := m.sys
	for _, o := range sys.Outputs {
		m.outputs = append(m.outputs, Quantity{Name: o.Name, Unit: o.Unit.Text})
		m.outScale = append(m.outScale, o.Unit.DiffScale())
		div := o.Unit.Scale
		if div == 0 {
			div = 1
		}
		m.outOffset, m.outDiv = append(m.outOffset, o.Unit.Offset), append(m.outDiv, div)
		m.signalsO = append(m.signalsO, interact.Signal{Name: o.Name, Unit: o.Unit.Text, Scale: o.Unit.DiffScale(), Span: o.Span / o.Unit.DiffScale()})
	}
	for _, k := range sys.Inputs {
		s := sys.Params[k]
		m.inputs = append(m.inputs, Quantity{Name: s.Name, Unit: s.Unit.Text})
		m.inScale = append(m.inScale, s.Unit.DiffScale())
		m.signalsI = append(m.signalsI, interact.Signal{Name: s.Name, Unit: s.Unit.Text, Scale: s.Unit.DiffScale(),
			Span: s.Span / s.Unit.DiffScale(), Nominal: s.Unit.FromSI(s.Value)})
	}
	for _, u := range sys.Unknowns {
		m.lower = append(m.lower, u.Min)
		m.upper = append(m.upper, u.Max)
		m.names = append(m.names, u.Name)
	}
	for _, e := range sys.Equations {
		m.eqNames = append(m.eqNames, e.Name)
	}
	m.pattern = m.prog.Pattern()
	if !m.opts.generalOutputs {
		for _, o := range sys.Outputs {
			v, ok := o.Expr.(*model.Var)
			if !ok {
				m.outVar = nil
				break
			}
			m.outVar = append(m.outVar, v.Index)
		}
	}
	m.pcols = append(append([]int(nil), sys.Inputs...), m.axes...)
}

// modelWorker solves and analyses points for one goroutine.
type modelWorker struct {
	m    *modelRun
	eval *jacobian.Eval
	prob *solve.Problem
	sol  *solve.Solver // keeps prob's block decomposition between points
	p    []float64     // the parameters of the point being solved

	lu     *sparse.LU
	fp     *mat.Dense // dF/dp for the inputs, then the axes
	dxda   []float64  // dx/dp of each axis at the last point analysed, axis by axis
	xpred  []float64
	m0, m1 []float64 // the predictor's dx/ds at both ends
	chk    []float64 // the checks' quantities at the last point
	dydx   *mat.Dense
	dydu   *mat.Dense
	k      *mat.Dense // the gain matrix of the last point, display units
	rhs    []float64
	z      []float64
	work   []float64
	y      []float64
	gs     interact.GainSet
	aopts  interact.Options
	az     *interact.Analyzer // its results last until the next point
	block  []float64          // what is left of the block take cuts from
	fast   solve.Options      // the corrector's after a prediction
	jac    jacobian.Sparse    // dF/dx in the pattern, over the solver's values
	// The backing arrays of fp, dydx, dydu and k, which are the worker's
	// own and never reallocated.
	fpRaw, dydxRaw, dyduRaw, kRaw blas64.General
}

// pointBlock is the number of points whose numbers one block of take
// holds.
const pointBlock = 64

// take returns k new zeroed values for a point's state and record, cut
// from a block shared by several points (one allocation for many; a
// block lives as long as any of its points' slices).
func (w *modelWorker) take(k int) []float64 {
	if len(w.block) < k {
		w.block = make([]float64, pointBlock*k)
	}
	v := w.block[:k:k]
	w.block = w.block[k:]
	return v
}

func (m *modelRun) newWorker() *modelWorker {
	n, no, ni := len(m.sys.Unknowns), len(m.sys.Outputs), len(m.sys.Inputs)
	w := &modelWorker{m: m, eval: m.prog.NewEval(),
		fp: mat.NewDense(len(m.sys.Equations), len(m.pcols), nil), dydx: mat.NewDense(no, n, nil), dydu: mat.NewDense(no, ni, nil), k: mat.NewDense(no, ni, nil),
		dxda: make([]float64, len(m.axes)*n), xpred: make([]float64, n), m0: make([]float64, n), m1: make([]float64, n), chk: make([]float64, len(m.sys.Checks)),
		rhs: make([]float64, n), z: make([]float64, n), work: make([]float64, n), y: make([]float64, no)}
	w.prob = &solve.Problem{
		N: n, RowPtr: m.pattern.RowPtr, ColIdx: m.pattern.ColIdx,
		Residual: func(f, x []float64) error { return w.eval.Residual(f, x, w.p) },
		ResidualJacobian: func(f, jval, x []float64) error {
			j := &w.jac
			if !sameArray(j.Val, jval) {
				j.Val = jval // the solver's own array, the same call after call
			}
			return w.eval.ResidualJacobian(f, j, x, w.p)
		},
		Lower: m.lower, Upper: m.upper, VarNames: m.names, EqNames: m.eqNames,
	}
	w.jac = jacobian.Sparse{Rows: n, Cols: n, RowPtr: m.pattern.RowPtr, ColIdx: m.pattern.ColIdx}
	w.sol = solve.NewSolver(w.prob)
	w.fpRaw, w.dydxRaw, w.dyduRaw, w.kRaw = w.fp.RawMatrix(), w.dydx.RawMatrix(), w.dydu.RawMatrix(), w.k.RawMatrix()
	// The corrector after a prediction: plain Newton on the whole system,
	// a few iterations at most.
	if opts := m.opts.Solver; opts != nil {
		w.fast = *opts
	}
	w.fast.NoBlocks, w.fast.NoHomotopy = true, true
	if w.fast.MaxIter <= 0 || w.fast.MaxIter > fastIterations {
		w.fast.MaxIter = fastIterations
	}
	// Pivots are kept along a chain and reset to the nominal solve's at its
	// start, so that records depend on the chain alone (not on -j).
	w.sol.KeepPivots = true
	if m.opts.Analysis != nil {
		w.aopts = *m.opts.Analysis
	}
	w.aopts.MaxPairings = -1
	// The records keep numbers and verdicts only: skip the words, and the
	// singular vectors, sensitivities and scalings no record reads.
	w.aopts.Brief, w.aopts.NoDirections = true, true
	w.az = interact.NewAnalyzer(&w.aopts)
	w.gs = interact.GainSet{Outputs: m.signalsO, Inputs: m.signalsI, Source: "model"}
	return w
}

// Point implements Worker. From a neighbour it first predicts the state
// at p (see predict) and corrects with plain Newton on the whole system;
// when that does not converge quickly it solves from the neighbour's state
// with the solver's full strategy (blocks, homotopy), as from any guess.
func (w *modelWorker) Point(ctx context.Context, p []float64, from State, rec *Record) (State, error) {
	if !sameArray(w.p, p) {
		w.p = p // a chain hands the same slice point after point: no write barrier then
	}
	if from.ChainStart {
		// A new chain: keep nothing from other chains' points; start from
		// the nominal point's pivots, as every chain does.
		w.sol.UsePivots(w.m.pivots)
		if w.m.gainsLU == nil {
			w.lu = nil
		} else {
			if w.lu == nil {
				w.lu = new(sparse.LU)
			}
			w.lu.CopyFrom(w.m.gainsLU)
		}
	}
	opts := w.m.opts.Solver
	var err error
	iters := 0
	n, no, ni, np := len(w.xpred), len(w.m.outputs), len(w.m.inputs), len(w.m.interest)
	var ft *tangentData // the tangent data of from, if it has any
	t, ok := w.tangentOf(from)
	if ok {
		ft = &t // a local only read through: no write barriers
	}
	// One backing array for the state (solved into it), the record's
	// numbers and the state's tangent.
	buf := w.take(n + no + 2*no*ni + np + w.tangentSize(from, ft))
	var res solve.Result // on the stack: no write barriers
	solved := false
	if x0 := w.predict(p, from, ft); x0 != nil {
		res.X = buf[:n:n]
		err = w.sol.SolveInto(ctx, &res, x0, &w.fast)
		iters = res.Iterations
		solved = err == nil || ctx.Err() != nil
	}
	if !solved {
		res.X = buf[:n:n]
		err = w.sol.SolveInto(ctx, &res, from.X, opts)
		iters += res.Iterations
	}
	rec.Iterations = iters
	if err != nil {
		return State{}, err
	}
	x := res.X
	buf = buf[n:]
	st := State{X: x}
	rec.Outside = w.outside(x, p)
	plain := w.plainOutputs(x)
	a, k, err := w.analyse(x, p, plain)
	if err != nil {
		return st, err
	}
	if plain {
		for i, v := range w.m.outVar {
			w.y[i] = x[v]
		}
	} else if err := w.eval.Outputs(w.y, x, p); err != nil {
		return st, err
	}
	rec.Outputs, buf = buf[:no:no], buf[no:]
	rec.K, buf = buf[:no*ni:no*ni], buf[no*ni:]
	rec.RGA, buf = buf[:no*ni:no*ni], buf[no*ni:]
	rec.NI, buf = buf[:np:np], buf[np:]
	st.Tangent = w.tangent(buf, p, from, ft)
	for i, v := range w.y {
		rec.Outputs[i] = (v - w.m.outOffset[i]) / w.m.outDiv[i] // model.Unit.FromSI
	}
	rowsInto(rec.K, &w.kRaw, no, ni)
	rr := a.RGA.RawMatrix()
	rowsInto(rec.RGA, &rr, no, ni)
	rec.Det = a.Det
	rec.Cond = math.NaN()
	if a.SVD != nil {
		rec.Cond = a.SVD.Cond
	}
	if b := bestOf(a); b != nil {
		rec.Best = w.pairingName(b.Pairs)
	}
	if cap(rec.Pass) >= np {
		rec.Pass = rec.Pass[:np] // room the engine made
	} else {
		rec.Pass = make([]bool, np)
	}
	// Unscaled, the analysis's K is k itself and its NI of a pairing is
	// Niederlinski(k, pr) to the bit (det from the same LU): reuse it.
	unscaled := w.aopts.Scaling == interact.ScaleNone
	for q, pr := range w.m.interest {
		found := false
		for ri := range a.Pairings {
			r := &a.Pairings[ri]
			if slices.Equal(r.Pairs, pr) {
				rec.Pass[q] = passes(r.Verdict)
				rec.NI[q], found = r.Niederlinski, true
				break
			}
		}
		if !found || !unscaled {
			rec.NI[q] = interact.Niederlinski(k, pr)
		}
	}
	return st, nil
}

// outside returns the names of the model's checks whose quantity lies
// outside its range at (x, p), or that cannot be evaluated there; nil when
// none.
func (w *modelWorker) outside(x, p []float64) []string {
	checks := w.m.sys.Checks
	if len(checks) == 0 {
		return nil
	}
	var names []string
	if err := w.eval.Checks(w.chk, x, p); err != nil {
		for _, c := range checks {
			names = append(names, c.Name)
		}
		return names
	}
	for i, c := range checks {
		if v := w.chk[i]; !(v >= c.Min && v <= c.Max) {
			names = append(names, c.Name)
		}
	}
	return names
}

// fastIterations caps the Newton corrector after a prediction: from a good
// prediction it converges in one or two iterations, and a prediction that
// needs more is better abandoned for the full solver.
const fastIterations = 8

// tangentData is the worker's data in State.Tangent for a state at
// parameters p with unknowns x: p over the axes and dx/dp of each axis, and,
// when the state was solved from a neighbour at p' with unknowns x', the
// same for that neighbour. Laid out as
//
//	[ p (na) | dx/dp (na·n, axis by axis) | p' (na) | x' (n) | dx'/dp (na·n) ]
//
// with the neighbour's part missing for the nominal state.
type tangentData struct {
	p, dxdp              []float64
	pBack, xBack, dxBack []float64 // nil without the neighbour's part
}

// tangentOf returns the tangent data of the state from, and whether it has
// any. The slices are cut from from.Tangent; the result is meant for a
// local variable (storing slices in the worker would cost a write barrier
// per slice while the garbage collector marks).
func (w *modelWorker) tangentOf(from State) (tangentData, bool) {
	var d tangentData
	t, na, n := from.Tangent, len(w.m.axes), len(from.X)
	switch len(t) {
	case na * (n + 1):
	case 2*na*(n+1) + n:
		d.pBack, d.xBack, d.dxBack = t[na*(n+1):na*(n+2)], t[na*(n+2):na*(n+2)+n], t[na*(n+2)+n:]
	default:
		return d, false
	}
	d.p, d.dxdp = t[:na], t[na:na*(n+1)]
	return d, true
}

// predict returns the state at p predicted from the neighbour's state and
// its tangent data t, or nil when it has none (t nil). The prediction is
// first order, x + Σ_a dx/dp_a·Δp_a, unless the step continues the line
// from the neighbour's own neighbour (the chains of a grid are straight
// lines): then it is the cubic through both states with both tangents
// (Hermite), which lets Newton converge in one iteration on smooth
// stretches.
func (w *modelWorker) predict(p []float64, from State, t *tangentData) []float64 {
	n := len(from.X)
	if t == nil {
		return nil
	}
	x := w.xpred[:n]
	xf := from.X[:n]
	copyf(x, xf)
	axes, span := w.m.axes, w.m.axisSpan[:len(w.m.axes)]
	tp, dxdp := t.p[:len(axes)], t.dxdp[:len(axes)*n]
	back := t.pBack != nil
	var pBack []float64
	if back {
		pBack = t.pBack[:len(axes)]
	}
	// Δ = p - p_from and the step back g = p' - p_from, in axis spans.
	var dd, gg, dg float64
	for a, k := range axes {
		d := (p[k] - tp[a]) / span[a]
		dd += d * d
		if back {
			g := (pBack[a] - tp[a]) / span[a]
			gg, dg = gg+g*g, dg+d*g
		}
	}
	if dd == 0 {
		return x
	}
	// c is the step as a multiple of the step back (c = -1 on a grid).
	c, cubic := 0.0, false
	if gg > 0 && dg*dg >= 0.99*dd*gg && dd <= 4*gg {
		c, cubic = dg/gg, true
	}
	// Whatever the cubic does not cover (all of the step, or the part off
	// the line) is taken to first order.
	for a, k := range axes {
		dp := p[k] - tp[a]
		if cubic {
			dp -= c * (pBack[a] - tp[a])
		}
		if dp == 0 {
			continue
		}
		for j, v := range dxdp[a*n : (a+1)*n] {
			x[j] += v * dp
		}
	}
	if cubic {
		// Hermite basis on s in [0, 1] (s = 0 here, s = 1 at the neighbour's
		// neighbour), evaluated at s = c.
		h00, h10 := 2*c*c*c-3*c*c+1, c*c*c-2*c*c+c
		h01, h11 := -2*c*c*c+3*c*c, c*c*c-c*c
		// dx/ds at both ends, summed axis by axis.
		m0, m1 := w.m0[:n], w.m1[:n]
		clear(m0)
		clear(m1)
		dxBack := t.dxBack[:len(axes)*n]
		for a := range axes {
			g := pBack[a] - tp[a]
			d0, d1 := dxdp[a*n:(a+1)*n], dxBack[a*n:(a+1)*n]
			for j := range m0 {
				m0[j] += d0[j] * g
				m1[j] += d1[j] * g
			}
		}
		xb := t.xBack[:n]
		for j := range x {
			x[j] += (h00-1)*xf[j] + h10*m0[j] + h01*xb[j] + h11*m1[j]
		}
	}
	lower, upper := w.m.lower[:n], w.m.upper[:n]
	for j, v := range x {
		if !(v > lower[j] && v < upper[j]) || math.IsInf(v, 0) {
			x[j] = xf[j] // keep what would leave the bounds where it was
		}
	}
	return x
}

// tangentSize is the length of the tangent data of a state solved from
// the neighbour from, whose tangent data is ft (nil: none).
func (w *modelWorker) tangentSize(from State, ft *tangentData) int {
	na, n := len(w.m.axes), len(w.xpred)
	size := na * (n + 1)
	if ft != nil && len(from.X) == n {
		size = 2*size + n
	}
	return size
}

// tangent fills t (of tangentSize(from, back)) with the tangent data of
// the state just analysed at p, solved from the neighbour from whose
// tangent data is back (see tangentData), and returns it.
func (w *modelWorker) tangent(t, p []float64, from State, back *tangentData) []float64 {
	na, n := len(w.m.axes), len(w.xpred)
	size := len(t)
	for a, k := range w.m.axes {
		t[a] = p[k]
	}
	copyf(t[na:], w.dxda)
	if size > na*(n+1) {
		copyf(t[na*(n+1):], back.p)
		copyf(t[na*(n+2):], from.X)
		copyf(t[na*(n+2)+n:], back.dxdp)
	}
	return t
}

// pairingName names a pairing, without building the name again for the
// pairings of interest.
func (w *modelWorker) pairingName(pr interact.Pairing) string {
	for q, r := range w.m.interest {
		if slices.Equal(r, pr) {
			return w.m.pairNames[q]
		}
	}
	return PairingName(w.m.outputs, w.m.inputs, pr)
}

// analyse computes the gain matrix at the solved state x by the implicit-
// function theorem, K = dy/dx (-Fx⁻¹ Fu) + dy/du, in display units, and
// the interaction analysis of it. It also leaves dx/dp of each axis in
// w.dxda for predicting the next points. The Jacobian is the solver's, at
// the solution of its last Solve. plain is plainOutputs(x): dy/dx and
// dy/du are then known without evaluating them.
func (w *modelWorker) analyse(x, p []float64, plain bool) (*interact.Analysis, *mat.Dense, error) {
	m := w.m
	n, no, ni := len(m.sys.Unknowns), len(m.outputs), len(m.inputs)
	jval, err := w.sol.Jacobian(x)
	if err != nil {
		return nil, nil, err
	}
	if w.lu == nil {
		w.lu, err = sparse.Factorize(&sparse.CSR{Rows: n, Cols: n, RowPtr: m.pattern.RowPtr, ColIdx: m.pattern.ColIdx, Val: jval}, nil)
	} else {
		err = w.lu.RefactorValues(jval)
	}
	if err != nil {
		w.lu = nil
		return nil, nil, fmt.Errorf("no gains: the Jacobian dF/dx is singular at this point (%v)", err)
	}
	if err := w.eval.ParamJacobian(w.fp, x, p, m.pcols); err != nil {
		return nil, nil, err
	}
	if !plain {
		if err := w.eval.OutputGradients(w.dydx, w.dydu, x, p, m.sys.Inputs); err != nil {
			return nil, nil, err
		}
	}
	k := w.k // the analysis copies what it keeps
	// The matrices are the worker's own, made dense with these shapes.
	fp, np := &w.fpRaw, len(m.pcols)
	dydx, dydu, kr := &w.dydxRaw, &w.dyduRaw, &w.kRaw
	rhs, z := w.rhs[:n], w.z[:n]
	for j := 0; j < ni; j++ {
		for r := range rhs {
			rhs[r] = -fp.Data[r*fp.Stride+j]
		}
		w.lu.SolveWith(w.work, z, rhs)
		for i := 0; i < no; i++ {
			var s float64
			if plain {
				// dy_i/du_j = 0 and dy_i/dx a unit row, summed as below
				// to the bit (signed zeros and NaN included).
				for c, v := range z {
					if c == m.outVar[i] {
						s += 1 * v
					} else {
						s += 0 * v
					}
				}
			} else {
				s = dydu.Data[i*dydu.Stride+j]
				row := dydx.Data[i*dydx.Stride : i*dydx.Stride+n]
				for c, v := range row {
					s += v * z[c]
				}
			}
			kr.Data[i*kr.Stride+j] = s * m.inScale[j] / m.outScale[i]
		}
	}
	for a := ni; a < np; a++ {
		for r := range rhs {
			rhs[r] = -fp.Data[r*fp.Stride+a]
		}
		w.lu.SolveWith(w.work, w.dxda[(a-ni)*n:(a-ni+1)*n], rhs)
	}
	gs := w.gs
	gs.K = k
	a, err := w.az.Analyze(&gs)
	if err != nil {
		return nil, k, err
	}
	return a, k, nil
}

// plainOutputs reports whether the outputs can be taken at x without
// evaluation: every output is a plain unknown (see modelRun.outVar) and
// finite there (where one is not, the evaluations say so in their own
// words).
func (w *modelWorker) plainOutputs(x []float64) bool {
	if w.m.outVar == nil {
		return false
	}
	for _, v := range w.m.outVar {
		if math.IsInf(x[v], 0) || math.IsNaN(x[v]) {
			return false
		}
	}
	return true
}

// systemID is a digest of the expanded system: symbols, values and
// equations. Two runs with equal digests solve the same equations.
func systemID(sys *model.System) string {
	h := sha256.New()
	var b strings.Builder
	num := func(v float64) { // as %v prints it
		b.WriteByte(' ')
		b.WriteString(strconv.FormatFloat(v, 'g', -1, 64))
	}
	sym := func(kind string, s model.Symbol) {
		b.WriteString(kind + " " + s.Name + " " + strconv.Itoa(int(s.Role)))
		num(s.Value)
		num(s.Min)
		num(s.Max)
		num(s.Span)
		b.WriteString(" " + s.Unit.Text + "\n")
	}
	for _, s := range sys.Unknowns {
		sym("x", s)
	}
	for _, s := range sys.Params {
		sym("p", s)
	}
	fmt.Fprintf(&b, "in %v dist %v\n", sys.Inputs, sys.Disturbances)
	seen := map[model.Node]int{}
	for _, e := range sys.Equations {
		b.WriteString("eq " + e.Name + " ")
		writeNode(&b, e.Residual, seen)
		b.WriteByte('\n')
	}
	for _, o := range sys.Outputs {
		b.WriteString("out " + o.Name + " " + o.Unit.Text + " ")
		writeNode(&b, o.Expr, seen)
		b.WriteByte('\n')
	}
	h.Write([]byte(b.String()))
	return hex.EncodeToString(h.Sum(nil))
}

// writeNode prints the tree; a subtree shared by pointer (a define used
// many times) is printed once and referred to as #k afterwards, which keeps
// the text linear in the size of the expanded model.
func writeNode(b *strings.Builder, n model.Node, seen map[model.Node]int) {
	if k, ok := seen[n]; ok {
		b.WriteString("#" + strconv.Itoa(k))
		return
	}
	switch n.(type) {
	case *model.Neg, *model.Binary, *model.Call:
		seen[n] = len(seen)
	}
	switch n := n.(type) {
	case *model.Const:
		b.WriteString(strconv.FormatFloat(n.Value, 'g', -1, 64))
	case *model.Var:
		b.WriteString("x" + strconv.Itoa(n.Index))
	case *model.Param:
		b.WriteString("p" + strconv.Itoa(n.Index))
	case *model.Neg:
		b.WriteString("(-")
		writeNode(b, n.X, seen)
		b.WriteByte(')')
	case *model.Binary:
		b.WriteByte('(')
		writeNode(b, n.L, seen)
		b.WriteByte(byte(n.Op))
		writeNode(b, n.R, seen)
		b.WriteByte(')')
	case *model.Call:
		b.WriteString(string(n.Fn) + "(")
		for i, a := range n.Args {
			if i > 0 {
				b.WriteByte(',')
			}
			writeNode(b, a, seen)
		}
		b.WriteByte(')')
	default:
		panic(fmt.Sprintf("sweep: unknown node type %T", n))
	}
}

// rowsInto copies the rows×cols matrix m into dst, row by row.
func rowsInto(dst []float64, m *blas64.General, rows, cols int) {
	if m.Stride == cols {
		copyf(dst[:rows*cols], m.Data[:rows*cols])
		return
	}
	for i := 0; i < rows; i++ {
		copyf(dst[i*cols:(i+1)*cols], m.Data[i*m.Stride:i*m.Stride+cols])
	}
}

// copyf is copy for the few values of a small model's state, where a loop
// beats the call to move memory.
func copyf(dst, src []float64) {
	for i, v := range src {
		dst[i] = v
	}
}

// sameArray reports whether a and b are the same slice of the same array,
// so that storing b where a is would change nothing (and the store, with
// its write barrier while the collector marks, can be skipped).
func sameArray(a, b []float64) bool {
	return len(a) == len(b) && (len(a) == 0 || &a[0] == &b[0])
}
