package solve

import (
	"context"
	"errors"
	"fmt"
	"math"
	"sort"
	"strings"

	"github.com/loopwright/loopwright/solve/sparse"
	"github.com/loopwright/loopwright/solve/structure"
)

// Problem is what to solve: N equations F(x) = 0 in N unknowns, with the
// pattern of the Jacobian and functions that evaluate F and J.
type Problem struct {
	N              int   // unknowns = equations
	RowPtr, ColIdx []int // Jacobian pattern, CSR (len RowPtr = N+1)

	// Residual sets f = F(x). It returns an error when F cannot be
	// evaluated at x (a log of a negative value, say); the solver then
	// treats the point as out of reach.
	Residual func(f, x []float64) error
	// ResidualJacobian sets f = F(x) and jval to the Jacobian's values at
	// x, in the order of the pattern.
	ResidualJacobian func(f, jval, x []float64) error

	// Lower and Upper bound the unknowns (±Inf where there is none; nil
	// means no bounds). The solver never steps outside them.
	Lower, Upper []float64
	// Typical is the typical magnitude of each unknown, for the step test
	// and the equation scales. nil or a non-positive entry: taken from the
	// starting guess, else from the bounds, else 1.
	Typical []float64

	VarNames, EqNames []string // for messages; nil gives "unknown 3", "equation 3"
	// FormatValue prints a value of unknown j for messages, in the unit
	// the user declared; nil prints the SI number.
	FormatValue func(j int, v float64) string
}

// Options says how hard to try. A nil *Options or a zero field means the
// default given with the field.
type Options struct {
	// MaxIter is the limit on Newton iterations per run (each block, the
	// whole system, each homotopy corrector). Zero means 50.
	MaxIter int
	// FTol is the convergence test on the scaled residual: max over
	// equations of |F_i|/s_i, where s_i is the size of the terms of
	// equation i at the guess (max_j |∂F_i/∂x_j|·typical_j). Zero means 1e-10.
	FTol float64
	// XTol is the test on the scaled step max_j |Δx_j|/typical_j: a step
	// below XTol with a scaled residual below √FTol also counts as
	// converged (the residual cannot drop further in floating point). Zero
	// means 1e-13.
	XTol float64
	// NoHomotopy switches off the homotopy fallback.
	NoHomotopy bool
	// NoBlocks switches off the block-triangular decomposition: the whole
	// system is solved at once from the start.
	NoBlocks bool
	// HomotopySteps limits the number of continuation steps. Zero means 200.
	HomotopySteps int
	// Recorder, when not nil, is called after every Newton iteration.
	Recorder func(Iteration)
}

// Iteration is one Newton iteration, for a trace.
type Iteration struct {
	Method             string  // "newton", "newton+blocks" or "homotopy"
	Block              int     // the block being solved, -1 for the whole system
	T                  float64 // the homotopy parameter (1 outside the homotopy)
	Iter               int     // iteration count within the run, from 1
	ScaledResidualNorm float64 // after the step
	StepNorm           float64 // scaled step max_j |Δx_j|/typical_j
	Alpha              float64 // step length along the Newton direction
}

// Result is what came back.
type Result struct {
	X                  []float64 // the last point reached (the solution when Converged)
	Status             Status
	Iterations         int     // Newton iterations, all runs together
	ResidualNorm       float64 // max_i |F_i(X)|, SI
	ScaledResidualNorm float64 // max_i |F_i(X)|/s_i
	StepNorm           float64 // the last scaled step
	Method             string  // "newton", "newton+blocks" or "homotopy": what converged (or was tried last)
	Blocks             int     // strongly connected blocks of the system
}

// resolveInto sets *r to o with the defaults filled in. It copies field
// by field and stores the Recorder only when either is set: copying the
// struct whole costs a bulk write barrier for its func field while the
// collector marks, which a warm solve of a small system feels.
func (o *Options) resolveInto(r *Options) {
	if o != nil {
		r.MaxIter, r.FTol, r.XTol, r.HomotopySteps = o.MaxIter, o.FTol, o.XTol, o.HomotopySteps
		r.NoHomotopy, r.NoBlocks = o.NoHomotopy, o.NoBlocks
		if o.Recorder != nil || r.Recorder != nil {
			r.Recorder = o.Recorder
		}
	} else {
		r.MaxIter, r.FTol, r.XTol, r.HomotopySteps = 0, 0, 0, 0
		r.NoHomotopy, r.NoBlocks = false, false
		if r.Recorder != nil {
			r.Recorder = nil
		}
	}
	if r.MaxIter <= 0 {
		r.MaxIter = 50
	}
	if r.FTol <= 0 {
		r.FTol = 1e-10
	}
	if r.XTol <= 0 {
		r.XTol = 1e-13
	}
	if r.HomotopySteps <= 0 {
		r.HomotopySteps = 200
	}
}

// solver holds the work of one Newton call.
type solver struct {
	ctx  context.Context
	prob *Problem
	opt  Options
	n    int

	lo, hi, typ []float64
	scale       []float64 // equation scales
	scaled      bool      // scale is set for this solve
	f, jval     []float64 // at the current point
	ftry, xtry  []float64
	d, dc, w    []float64

	hom bool      // subtract (1-t) F(x₀)
	t   float64   // homotopy parameter
	f0  []float64 // F(x₀)

	general bool // never the lean run (Solver.general, for tests)
	// After a lean run that converged, until the next run or evaluation:
	// the cache (cx, cf) is at the point reached, and convNorm is the
	// scaled max norm of F there.
	conv     bool
	convNorm float64
	out      outcome // of the last runOK or runAll

	iters    int
	lastStep float64
	method   method
	colMap   []int

	// The last point where F and J were evaluated together, with F
	// unshifted there (J is in jval), so that no point is evaluated twice:
	// the guess (scales, then the first iteration), an accepted first
	// trial of the line search (then the next iteration), the solution
	// (the last iteration, then the result's norms and Solver.Jacobian).
	cx, cf []float64
	cOK    bool
	y      []float64 // the iterate of a run
}

// method is what a solve is trying (or tried last); its name is the
// Result's Method. A number, not the name, so that setting it costs no
// write barrier.
type method uint8

const (
	noMethod method = iota
	newtonMethod
	blocksMethod
	homotopyMethod
	structureMethod
)

func (m method) String() string {
	switch m {
	case newtonMethod:
		return "newton"
	case blocksMethod:
		return "newton+blocks"
	case homotopyMethod:
		return "homotopy"
	case structureMethod:
		return "structure"
	}
	return ""
}

// setMethod sets res.Method to m's name, storing the string only when it
// is not already there (a store of a string costs a write barrier while
// the collector marks, and a Result reused from solve to solve usually
// has the name already).
func setMethod(res *Result, m method) {
	if name := m.String(); res.Method != name {
		res.Method = name
	}
}

// outcome is how one run ended.
type outcome struct {
	status Status
	reason string
	bad    int // the unknown at fault, or -1
	err    error
}

func (o outcome) ok() bool { return o.status == Converged }

// part is a square subsystem: some rows, solved for some columns.
type part struct {
	block      int
	rows, cols []int
	a          sparse.CSR
	src        []int // a.Val[k] = jval[src[k]]
	whole      bool  // src is the identity: the part is the whole system
	ident      bool  // rows and cols are 0..N-1 in order (the whole system, as given)
	lu         *sparse.LU
}

// Newton solves prob from x0 (which is not modified). On success the error
// is nil and Result.Status is Converged; otherwise the error is a
// *NotConverged (or the context's error when it was cancelled) and Result
// holds the best point reached. An invalid Problem (wrong lengths) panics.
func Newton(ctx context.Context, prob *Problem, x0 []float64, opts *Options) (*Result, error) {
	return NewSolver(prob).Solve(ctx, x0, opts)
}

// Solver solves one Problem many times, from different starting points or
// with different values behind its functions (the points of an envelope
// sweep, say). It keeps what depends only on the Jacobian's pattern between
// solves: the block decomposition, the blocks' sub-patterns and the work
// space. Every Solve returns exactly what Newton returns for the same call.
// A Solver is not for concurrent use; give each goroutine its own.
type Solver struct {
	// KeepPivots makes each Solve start from the column order and pivots
	// of the factorisations that the previous solves ended with (refactoring
	// with them while they pass the pivot threshold) instead of choosing
	// them afresh. On a sequence of nearby problems (the points of a
	// continuation chain) that saves the symbolic analysis at every solve;
	// the results then depend, in their last bits, on the sequence of
	// solves and not only on each call. Forget begins a new sequence.
	KeepPivots bool

	prob    *Problem
	st      *structure.Structure
	full    *part
	blocks  []*part // by block, made when first needed
	work    *solver
	pending *Pivots // for parts made after UsePivots
	general bool    // never the lean run (for the tests that compare it with run)
}

// Forget drops the factorisations kept for KeepPivots: the next Solve
// chooses its pivots afresh, as a new Solver would.
func (sv *Solver) Forget() {
	sv.pending = nil
	if sv.full != nil {
		sv.full.lu = nil
	}
	for _, pt := range sv.blocks {
		if pt != nil {
			pt.lu = nil
		}
	}
}

// Pivots are the factorisations a Solver keeps between solves for
// KeepPivots, to start Solvers of the same Problem from: the workers of a
// sweep start every chain from the pivots of the nominal solve, so that no
// chain needs a fresh symbolic analysis and every chain starts alike. A
// Pivots is only read once made, by any number of Solvers at once.
type Pivots struct {
	full   *sparse.LU
	blocks []*sparse.LU // by block; nil where there is none
}

// Pivots returns a copy of the factorisations the Solver keeps now.
func (sv *Solver) Pivots() *Pivots {
	clone := func(f *sparse.LU) *sparse.LU {
		if f == nil {
			return nil
		}
		c := new(sparse.LU)
		c.CopyFrom(f)
		return c
	}
	p := &Pivots{blocks: make([]*sparse.LU, len(sv.blocks))}
	if sv.full != nil {
		p.full = clone(sv.full.lu)
	}
	for b, pt := range sv.blocks {
		if pt != nil {
			p.blocks[b] = clone(pt.lu)
		}
	}
	return p
}

// UsePivots makes the Solver keep copies of p's factorisations in place of
// its own: with KeepPivots, the next Solve starts from p's pivots. A nil p
// is Forget.
func (sv *Solver) UsePivots(p *Pivots) {
	sv.Forget()
	if p == nil {
		return
	}
	sv.pending = p
	if sv.full != nil {
		sv.seed(sv.full)
	}
	for _, pt := range sv.blocks {
		if pt != nil {
			sv.seed(pt)
		}
	}
}

// seed copies the pending pivots of pt's part into it.
func (sv *Solver) seed(pt *part) {
	if sv.pending == nil {
		return
	}
	src := sv.pending.full
	if pt.block >= 0 {
		src = nil
		if pt.block < len(sv.pending.blocks) {
			src = sv.pending.blocks[pt.block]
		}
	}
	if src == nil {
		pt.lu = nil
		return
	}
	if pt.lu == nil {
		pt.lu = new(sparse.LU)
	}
	pt.lu.CopyFrom(src)
}

// NewSolver returns a Solver for prob. The Problem's pattern (N, RowPtr,
// ColIdx) must not change while the Solver is in use; its functions and
// bounds may.
func NewSolver(prob *Problem) *Solver { return &Solver{prob: prob} }

// Jacobian returns the Jacobian's values at x in the order of the pattern.
// Right after a Solve that converged, at the solution, it costs nothing: the
// last iteration evaluated it there. The functions are taken as they were at
// the last Solve: after changing what stands behind them (parameters), Solve
// again before asking. The slice belongs to the Solver and is overwritten by
// the next Solve or Jacobian.
func (sv *Solver) Jacobian(x []float64) ([]float64, error) {
	s := sv.work
	if s == nil || len(x) != s.n {
		sv.prepare(nil)
		s = sv.work
	}
	if err := s.evalAt(x); err != nil {
		return nil, err
	}
	return s.jval, nil
}

// prepare resets the work space for a new solve.
func (sv *Solver) prepare(opts *Options) *solver {
	prob, n := sv.prob, sv.prob.N
	s := sv.work
	if s == nil || s.n != n {
		nnz := prob.RowPtr[n]
		s = &solver{prob: prob, n: n}
		s.f, s.ftry, s.f0 = make([]float64, n), make([]float64, n), make([]float64, n)
		s.jval = make([]float64, nnz)
		s.xtry, s.d, s.dc, s.w = make([]float64, n), make([]float64, n), make([]float64, n), make([]float64, n)
		s.lo, s.hi, s.typ, s.scale = make([]float64, n), make([]float64, n), make([]float64, n), make([]float64, n)
		s.cx, s.cf, s.y = make([]float64, n), make([]float64, n), make([]float64, n)
		s.colMap = filled(n, -1)
		sv.work = s
	}
	// s.prob is sv.prob, set when s was made. s.ctx is set only where a
	// run other than the lean one needs it (ctx is handed to the lean run
	// and to canceled): storing an interface costs a write barrier while
	// the collector marks.
	s.general = sv.general
	opts.resolveInto(&s.opt)
	s.t, s.hom, s.iters, s.lastStep, s.method, s.scaled, s.conv = 1, false, 0, 0, noMethod, false, false
	// The functions may give other values than at the last solve (new
	// parameters behind them): forget the last evaluation.
	s.cOK = false
	return s
}

// Solve is Newton(ctx, prob, x0, opts) for the Solver's Problem.
func (sv *Solver) Solve(ctx context.Context, x0 []float64, opts *Options) (*Result, error) {
	sv.check(x0)
	return sv.solve(ctx, newResult(sv.prob.N), x0, opts)
}

// SolveInto is Solve with caller-owned storage: it solves into dst, every
// field of which it sets, and writes the point into dst.X's backing array
// when dst.X has the capacity for N values (dst.X is then resliced to
// length N), else into a new slice. It returns what Solve returns, the
// error alone (dst is the Result). The iterates, the point and every
// number are those of Solve for the same call, to the bit; only where the
// Result lives differs, so that a caller solving many small systems (the
// points of a sweep) allocates nothing per solve.
//
// The point returned in dst.X is overwritten by the next SolveInto into the
// same storage: a caller that keeps it must copy it, or hand each call
// storage of its own. x0 may be dst.X itself (its values are then replaced
// by the point).
func (sv *Solver) SolveInto(ctx context.Context, dst *Result, x0 []float64, opts *Options) error {
	sv.check(x0)
	n := sv.prob.N
	// Every field but X is set by the solve (each of its endings sets them
	// all); X is stored only when it changes: a Result reused from solve
	// to solve then takes no write barrier for it.
	if cap(dst.X) < n {
		dst.X = make([]float64, n)
	} else if len(dst.X) != n {
		dst.X = dst.X[:n]
	}
	_, err := sv.solve(ctx, dst, x0, opts)
	return err
}

// check panics when the Problem and x0 do not fit.
func (sv *Solver) check(x0 []float64) {
	prob := sv.prob
	n := prob.N
	if len(x0) != n || len(prob.RowPtr) != n+1 || prob.Residual == nil || prob.ResidualJacobian == nil {
		panic("solve: Newton: Problem and x0 do not fit (N, RowPtr, x0, Residual, ResidualJacobian)")
	}
}

// newResult returns a zero Result with X of length n; for a small n the
// Result and its X are one allocation.
func newResult(n int) *Result {
	if n <= smallResult {
		b := new(struct {
			r Result
			x [smallResult]float64
		})
		b.r.X = b.x[:n:n]
		return &b.r
	}
	return &Result{X: make([]float64, n)}
}

// smallResult is the largest N whose Result and X are allocated together.
const smallResult = 4

// solve is Solve into res, whose X has length N (res.X may be x0 itself).
func (sv *Solver) solve(ctx context.Context, res *Result, x0 []float64, opts *Options) (*Result, error) {
	prob := sv.prob
	n := prob.N
	s := sv.prepare(opts)

	// x is the guess moved inside its bounds, y (the iterate of the
	// runs) a copy of it.
	x, y := res.X, s.y
	s.setBounds(x, y, x0)

	// Structure first: a structurally singular system needs a different
	// specification, not a better guess.
	if sv.st == nil {
		eqs := make([][]int, n)
		for i := range eqs {
			eqs[i] = prob.ColIdx[prob.RowPtr[i]:prob.RowPtr[i+1]]
		}
		sv.st = structure.Analyze(eqs, n)
		sv.blocks = make([]*part, len(sv.st.Blocks))
	}
	st := sv.st
	// Unless asked to keep them, every solve chooses pivots afresh at its
	// first iteration, as a new solver would.
	if !sv.KeepPivots {
		sv.Forget()
	}
	res.Blocks = len(st.Blocks)
	if st.Singular() {
		return s.structuralFailure(res, st)
	}

	// Equation scales at the guess.
	if err := s.evalAt(x); err != nil {
		return s.fail(res, x, outcome{status: EvalFailed, bad: -1, err: err,
			reason: "the residual cannot be evaluated at the starting guess: " + err.Error()}, newtonMethod)
	}
	s.setScales() // and F(x₀) into s.f0

	if sv.full == nil {
		sv.full = s.newPart(-1, seq(n), seq(n))
		sv.seed(sv.full)
	}
	full := sv.full
	var reasons []string
	var best []float64 // the best point of the failed attempts (nil: x)
	// The norm at the guess, for keep; taken when first needed (neither
	// F(x₀) nor the scales change during the solve).
	bestNorm, haveNorm := 0.0, false
	keep := func(y []float64) {
		if !haveNorm {
			bestNorm, haveNorm = s.normOf(s.f0), true
		}
		if err := s.residual(s.ftry, y); err == nil {
			if nm := s.normOf(s.ftry); nm < bestNorm {
				bestNorm = nm
				best = append(best[:0], y...)
			}
		}
	}

	// 1. Block by block, when there is more than one block.
	if !s.opt.NoBlocks && len(st.Blocks) > 1 {
		s.method = blocksMethod
		s.ctx = ctx
		var out outcome
		for b, blk := range st.Blocks {
			if sv.blocks[b] == nil {
				sv.blocks[b] = s.newPart(b, blk.Equations, blk.Unknowns)
				sv.seed(sv.blocks[b])
			}
			out = s.run(sv.blocks[b], y, s.opt.FTol)
			if !out.ok() {
				out.reason = fmt.Sprintf("block %d of %d (%s): %s", b+1, len(st.Blocks), s.eqName(blk.Equations[0]), out.reason)
				break
			}
		}
		if out.ok() {
			out = s.run(full, y, s.opt.FTol) // check, and polish if needed
		}
		if out.ok() {
			return s.done(res, y)
		}
		if out.status == Canceled {
			return s.canceled(ctx, res, y)
		}
		reasons = append(reasons, "block Newton: "+out.reason)
		keep(y)
	}

	// 2. Newton on the whole system.
	s.method = newtonMethod
	if !s.opt.NoBlocks && len(st.Blocks) > 1 {
		copyf(y, x) // the blocks' runs moved it
	}
	if s.runOK(ctx, full, y, s.opt.FTol) {
		return s.done(res, y)
	}
	out := s.out
	if out.status == Canceled {
		return s.canceled(ctx, res, y)
	}
	reasons = append(reasons, "Newton: "+out.reason)
	keep(y)
	last := out

	// 3. Homotopy from the guess.
	if !s.opt.NoHomotopy {
		s.method = homotopyMethod
		s.ctx = ctx
		copyf(y, x)
		out = s.homotopy(full, y)
		if out.ok() {
			return s.done(res, y)
		}
		if out.status == Canceled {
			return s.canceled(ctx, res, y)
		}
		reasons = append(reasons, "homotopy: "+out.reason)
		keep(y)
		// Newton's own failure (a singular Jacobian at a named unknown, a
		// bound) says more than the homotopy's; keep its status.
		if last.status == IterationLimit || last.status == LineSearchFailed {
			last.status = out.status
		}
		if last.bad < 0 {
			last.bad = out.bad
		}
	}
	last.reason = strings.Join(reasons, "; ")
	if best == nil {
		best = x
	}
	return s.fail(res, best, last, s.method)
}

// setBounds fills lo, hi and typ and sets x and y to x0 moved strictly
// inside its bounds (x0 may be x or y).
//
// Nothing of it is kept from solve to solve: the bounds may change between
// solves (in place, too), and reading them to see whether they did costs
// what mapping them does (a NaN is no bound); the typical sizes come from
// x where Problem.Typical gives none.
func (s *solver) setBounds(x, y, x0 []float64) {
	p, n := s.prob, s.n
	x, y, x0, lo, hi, typs := x[:n], y[:n], x0[:n], s.lo[:n], s.hi[:n], s.typ[:n]
	var lower, upper, typical []float64
	if p.Lower != nil {
		lower = p.Lower[:n]
	}
	if p.Upper != nil {
		upper = p.Upper[:n]
	}
	if p.Typical != nil {
		typical = p.Typical[:n]
	}
	inf := math.Inf(1)
	for j, xj := range x0 {
		l, h := -inf, inf
		if lower != nil {
			if v := lower[j]; v == v {
				l = v
			}
		}
		if upper != nil {
			if v := upper[j]; v == v {
				h = v
			}
		}
		lo[j], hi[j] = l, h
		// A positive finite typical size, else |x_j| when that is
		// positive and finite, else the largest finite |bound|, else 1.
		typ := 0.0
		if typical != nil {
			if t := typical[j]; t > 0 && t < inf {
				typ = t
			}
		}
		if typ == 0 {
			if a := math.Abs(xj); a != 0 && a < inf {
				typ = a
			} else {
				typ = typOfBounds(l, h)
			}
		}
		typs[j] = typ
		// Project the guess strictly inside.
		if xj-xj != 0 { // NaN or ±Inf
			xj = 0
		}
		if xj <= l {
			xj = min(l+margin(typ, l, h), l+0.5*(h-l))
		}
		if xj >= h {
			xj = max(h-margin(typ, l, h), l+0.5*(h-l))
		}
		x[j], y[j] = xj, xj
	}
}

// typOfBounds is the typical size of an unknown taken from its bounds:
// the largest finite |bound|, 1 when there is none or it is 0.
func typOfBounds(l, h float64) float64 {
	typ := 0.0
	if !math.IsInf(l, 0) {
		typ = max(typ, math.Abs(l))
	}
	if !math.IsInf(h, 0) {
		typ = max(typ, math.Abs(h))
	}
	if typ == 0 {
		typ = 1
	}
	return typ
}

// margin is how far inside its bounds l and h a guess on or beyond one is
// put: 1e-8 of its typical size, at most 1 % of the width.
func margin(typ, l, h float64) float64 {
	m := 1e-8 * typ
	if w := h - l; w < math.Inf(1) {
		m = min(m, 0.01*w)
	}
	return m
}

// setScales sets each equation's scale from the Jacobian at the guess
// (in s.jval): the largest |∂F_i/∂x_j|·typical_j, 1 when that is zero.
// It also copies F at the guess (s.cf) into s.f0, in the same loop.
func (s *solver) setScales() {
	p, n := s.prob, s.n
	rowPtr, scale, typ, f0, cf := p.RowPtr[:n+1], s.scale[:n], s.typ[:n], s.f0[:n], s.cf[:n]
	nnz := rowPtr[n]
	colIdx, jval := p.ColIdx[:nnz], s.jval[:nnz]
	k0 := rowPtr[0]
	for i := range scale {
		k1 := rowPtr[i+1]
		m := 0.0
		// Indexed from k0 to k1 rather than over subslices of jval and
		// colIdx: for the row or two of a small system, slicing costs
		// more than the bounds checks it saves.
		for k := k0; k < k1; k++ {
			// max(m, v) for v >= 0 or NaN, NaN once either is, as the
			// built-in gives it, without its call.
			if v := math.Abs(jval[k]) * typ[colIdx[k]]; v > m || v != v {
				m = v
			}
		}
		if m == 0 || math.IsInf(m, 0) || math.IsNaN(m) {
			m = 1
		}
		scale[i] = m
		f0[i] = cf[i]
		k0 = k1
	}
	s.scaled = true
}

func (s *solver) newPart(block int, rows, cols []int) *part {
	pt := &part{block: block, rows: rows, cols: cols}
	for l, c := range cols {
		s.colMap[c] = l
	}
	pt.a = sparse.CSR{Rows: len(rows), Cols: len(cols), RowPtr: make([]int, 1, len(rows)+1)}
	p := s.prob
	for _, r := range rows {
		for k := p.RowPtr[r]; k < p.RowPtr[r+1]; k++ {
			if l := s.colMap[p.ColIdx[k]]; l >= 0 {
				pt.a.ColIdx = append(pt.a.ColIdx, l)
				pt.src = append(pt.src, k)
			}
		}
		pt.a.RowPtr = append(pt.a.RowPtr, len(pt.a.ColIdx))
	}
	pt.a.Val = make([]float64, len(pt.src))
	for _, c := range cols {
		s.colMap[c] = -1
	}
	pt.whole = len(pt.src) == len(s.jval)
	for k, p := range pt.src {
		pt.whole = pt.whole && p == k
	}
	pt.ident = len(rows) == s.n && len(cols) == s.n
	for l := range rows {
		pt.ident = pt.ident && rows[l] == l && cols[l] == l
	}
	return pt
}

var errNotEvaluated = errors.New("solve: not evaluated")

// evalAt makes sure F (in s.cf, unshifted) and J (in s.jval) are those at
// x, evaluating them unless the last evaluation was at x to the bit.
func (s *solver) evalAt(x []float64) error {
	if s.cOK && sameBits(x, s.cx) {
		return nil
	}
	s.cOK = false
	if err := s.prob.ResidualJacobian(s.cf, s.jval, x); err != nil {
		return err
	}
	copyf(s.cx, x)
	s.cOK = true
	return nil
}

// copyf is copy(dst, src) for slices of the same length, by a loop for
// the few values of a small system, where calling memmove costs more.
func copyf(dst, src []float64) {
	if len(src) <= 4 {
		dst = dst[:len(src)]
		for i, v := range src {
			dst[i] = v
		}
		return
	}
	copy(dst, src)
}

func sameBits(a, b []float64) bool {
	for i, v := range a {
		if math.Float64bits(v) != math.Float64bits(b[i]) {
			return false
		}
	}
	return true
}

// residual evaluates F (minus (1-t)F(x₀) in the homotopy) into f.
func (s *solver) residual(f, x []float64) error {
	if s.cOK && sameBits(x, s.cx) {
		copyf(f, s.cf)
	} else if err := s.prob.Residual(f, x); err != nil {
		return err
	}
	s.shift(f)
	return nil
}

// residualJacobian evaluates the residual (as residual does) into f and the
// Jacobian into s.jval.
func (s *solver) residualJacobian(f, x []float64) error {
	if err := s.evalAt(x); err != nil {
		return err
	}
	copyf(f, s.cf)
	s.shift(f)
	return nil
}

func (s *solver) shift(f []float64) {
	if s.hom {
		for i := range f {
			f[i] -= (1 - s.t) * s.f0[i]
		}
	}
}

// measure returns the scaled max norm and the merit ½‖F_s‖² over the rows
// of pt; a non-finite residual gives +Inf.
func (s *solver) measure(pt *part, f []float64) (norm, phi float64) {
	if pt.ident {
		return s.measureAll(f)
	}
	for _, r := range pt.rows {
		v := f[r] / s.scale[r]
		if math.IsNaN(v) {
			return math.Inf(1), math.Inf(1)
		}
		if a := math.Abs(v); a > norm { // max without its NaN handling: v is a number
			norm = a
		}
		phi += 0.5 * v * v
	}
	return norm, phi
}

// measureAll is measure for a part whose rows are 0..N-1 in order: the
// same sums in the same order, without the indirection through the rows.
func (s *solver) measureAll(f []float64) (norm, phi float64) {
	scale := s.scale[:len(f)]
	for r, fr := range f {
		v := fr / scale[r]
		if v != v {
			return math.Inf(1), math.Inf(1)
		}
		if a := math.Abs(v); a > norm {
			norm = a
		}
		phi += 0.5 * v * v
	}
	return norm, phi
}

func (s *solver) normOf(f []float64) float64 {
	m := 0.0
	for i, v := range f {
		v = math.Abs(v / s.scale[i])
		if math.IsNaN(v) {
			return math.Inf(1)
		}
		if v > m {
			m = v
		}
	}
	return m
}

// runOK is run, with its outcome left in s.out: it reports whether the run
// converged, without the copies of the outcome that a caller of run makes.
func (s *solver) runOK(ctx context.Context, pt *part, x []float64, ftol float64) bool {
	if s.lean(pt) {
		s.conv = false
		return s.runAll(ctx, pt, x, ftol)
	}
	s.ctx = ctx
	s.out = s.run(pt, x, ftol)
	return s.out.status == Converged
}

// run is damped Newton on one part, from x (updated in place).
func (s *solver) run(pt *part, x []float64, ftol float64) outcome {
	s.conv = false
	if s.lean(pt) {
		s.runAll(s.ctx, pt, x, ftol)
		return s.out
	}
	small := 0
	for it := 0; ; it++ {
		if err := s.ctx.Err(); err != nil {
			return outcome{status: Canceled, reason: err.Error(), bad: -1, err: err}
		}
		if err := s.residualJacobian(s.f, x); err != nil {
			return outcome{status: EvalFailed, bad: -1, err: err, reason: "cannot evaluate the residual: " + err.Error()}
		}
		norm, phi := s.measure(pt, s.f)
		if norm <= ftol || (small > 0 && norm <= math.Sqrt(ftol)) {
			return outcome{status: Converged, bad: -1}
		}
		if math.IsInf(norm, 0) {
			return outcome{status: EvalFailed, bad: -1, reason: "the residual is not finite"}
		}
		if small >= 3 {
			return outcome{status: LineSearchFailed, bad: -1,
				reason: fmt.Sprintf("steps too small to make progress (scaled residual %.3g)", norm)}
		}
		if it >= s.opt.MaxIter {
			return outcome{status: IterationLimit, bad: -1,
				reason: fmt.Sprintf("no convergence in %d iterations (scaled residual %.3g)", s.opt.MaxIter, norm)}
		}

		// Newton direction: J d = -F on the part (the whole system's
		// values are the Jacobian's as they are).
		val := s.jval
		if !pt.whole {
			val = pt.a.Val
			for k, p := range pt.src {
				val[k] = s.jval[p]
			}
		}
		var err error
		if pt.lu == nil {
			a := pt.a
			a.Val = val
			pt.lu, err = sparse.Factorize(&a, nil)
		} else {
			err = pt.lu.RefactorValues(val)
		}
		if err != nil {
			pt.lu = nil
			var se *sparse.SingularError
			bad := -1
			if errors.As(err, &se) {
				bad = pt.cols[se.Col]
			}
			return outcome{status: SingularJacobian, bad: bad, err: err,
				reason: "singular Jacobian at unknown " + s.varName(bad)}
		}
		d := s.d[:len(pt.cols)]
		for l, r := range pt.rows {
			d[l] = -s.f[r]
		}
		pt.lu.SolveWith(s.w[:len(pt.cols)], d, d)

		// Bounds. First try the Newton step with each component cut to
		// 0.995 of its distance to a bound: it lets a mole fraction fall
		// towards zero by a factor 200 per step without holding back the
		// others. If no step along that direction reduces the merit, fall
		// back to the whole Newton step scaled to the fraction to the
		// boundary, which is a descent direction.
		dc := s.dc[:len(pt.cols)]
		clipped := false
		amax, blocking, up := 1.0, -1, false
		for l, c := range pt.cols {
			dc[l] = d[l]
			if d[l] < 0 && s.lo[c] > math.Inf(-1) {
				room := 0.995 * (x[c] - s.lo[c])
				if -d[l] > room {
					dc[l], clipped = -room, true
				}
				if lim := room / -d[l]; lim < amax {
					amax, blocking, up = lim, c, false
				}
			} else if d[l] > 0 && s.hi[c] < math.Inf(1) {
				room := 0.995 * (s.hi[c] - x[c])
				if d[l] > room {
					dc[l], clipped = room, true
				}
				if lim := room / d[l]; lim < amax {
					amax, blocking, up = lim, c, true
				}
			}
		}
		alpha, ok := 0.0, false
		if clipped {
			alpha, ok = s.lineSearch(pt, x, dc, 1, phi)
		}
		if !ok && blocking >= 0 && amax < 1 {
			// A step held back by a bound that the iterate already
			// (nearly) sits on: the bound is what stops the solve.
			b := s.lo[blocking]
			if up {
				b = s.hi[blocking]
			}
			if math.Abs(x[blocking]-b) <= 1e-6*s.typ[blocking] {
				amax = 0
			}
		}
		if !ok {
			if !(amax > 1e-12) {
				return s.hitBound(blocking, up)
			}
			alpha, ok = s.lineSearch(pt, x, d, amax, phi)
			dc = d
		}
		if !ok {
			return outcome{status: LineSearchFailed, bad: -1,
				reason: fmt.Sprintf("line search failed: no step along the Newton direction reduces the residual (scaled residual %.3g)", norm)}
		}
		d = dc
		step := 0.0
		for l, c := range pt.cols {
			// max(step, v) as the built-in gives it, NaN included.
			if v := math.Abs(alpha*d[l]) / s.typ[c]; v > step || v != v {
				step = v
			}
			x[c] = s.xtry[c]
		}
		s.iters++
		s.lastStep = step
		if step <= s.opt.XTol {
			small++
		} else {
			small = 0
		}
		if s.opt.Recorder != nil {
			nrm, _ := s.measure(pt, s.ftry)
			s.opt.Recorder(Iteration{Method: s.method.String(), Block: pt.block, T: s.t, Iter: it + 1,
				ScaledResidualNorm: nrm, StepNorm: step, Alpha: alpha})
		}
	}
}

// lineSearch backtracks from alpha = amax along dir until the merit
// ½‖F_s‖² meets the Armijo test φ(α) ≤ (1 - 2cα)φ(0), c = 1e-4 (for the
// Newton direction, φ'(0) = -2φ(0)). Each cut takes the minimiser of the
// quadratic through φ(0), φ'(0) and φ(α), kept within [0.1α, 0.5α]; a point
// where the residual cannot be evaluated cuts by 4. On success s.xtry and
// s.ftry hold the accepted point.
func (s *solver) lineSearch(pt *part, x, dir []float64, amax, phi float64) (float64, bool) {
	copyf(s.xtry, x)
	alpha := amax
	for first := true; alpha >= 1e-10; first = false {
		for l, c := range pt.cols {
			s.xtry[c] = x[c] + alpha*dir[l]
		}
		phiT := math.Inf(1)
		// The first trial is usually accepted, and the next iteration
		// needs the Jacobian there: evaluate both at once. A point where
		// only the Jacobian fails is still judged by its residual.
		err := errNotEvaluated
		if first {
			err = s.residualJacobian(s.ftry, s.xtry)
		}
		if err != nil {
			err = s.residual(s.ftry, s.xtry)
		}
		if err == nil {
			_, phiT = s.measure(pt, s.ftry)
		}
		if phiT <= (1-2e-4*alpha)*phi {
			return alpha, true
		}
		next := 0.25 * alpha
		if !math.IsInf(phiT, 0) {
			g := -2 * phi
			if c := (phiT - phi - g*alpha) / (alpha * alpha); c > 0 {
				next = -g / (2 * c)
			}
			next = min(max(next, 0.1*alpha), 0.5*alpha)
		}
		alpha = next
	}
	return 0, false
}

// homotopy follows H(x, t) = F(x) - (1-t)F(x₀) from t = 0, where x₀ solves
// it, to t = 1, with a step in t that doubles after easy corrections and
// halves after failed ones, then polishes the end point with Newton.
func (s *solver) homotopy(full *part, x []float64) outcome {
	defer func() { s.hom, s.t = false, 1 }()
	s.hom = true
	t, dt := 0.0, 0.1
	save := make([]float64, len(x))
	var out outcome
	for step := 0; t < 1; step++ {
		if step >= s.opt.HomotopySteps {
			return outcome{status: HomotopyFailed, bad: -1,
				reason: fmt.Sprintf("stopped at t = %.4g after %d continuation steps", t, step)}
		}
		s.t = min(1, t+dt)
		copy(save, x)
		before := s.iters
		out = s.run(full, x, max(1e-6, s.opt.FTol))
		switch {
		case out.ok():
			t = s.t
			if s.iters-before <= 3 {
				dt = min(2*dt, 0.5)
			}
		case out.status == Canceled:
			return out
		default:
			copy(x, save)
			dt /= 2
			if dt < 1e-5 {
				out.status = HomotopyFailed
				out.reason = fmt.Sprintf("the path turns back or ends at t = %.4g (%s)", t, out.reason)
				return out
			}
		}
	}
	s.hom, s.t = false, 1
	return s.run(full, x, s.opt.FTol)
}

func (s *solver) done(res *Result, x []float64) (*Result, error) {
	copyf(res.X, x)
	res.Status = Converged
	setMethod(res, s.method)
	s.finish(res)
	return res, nil
}

func (s *solver) canceled(ctx context.Context, res *Result, x []float64) (*Result, error) {
	copyf(res.X, x)
	res.Status = Canceled
	setMethod(res, s.method)
	s.finish(res)
	return res, ctx.Err()
}

func (s *solver) finish(res *Result) {
	res.Iterations = s.iters
	res.StepNorm = s.lastStep
	if s.conv {
		// res.X is the point the lean run converged at: F there is in
		// the cache, and its scaled norm was measured.
		m := 0.0
		for _, v := range s.cf {
			m = max(m, math.Abs(v))
		}
		res.ResidualNorm, res.ScaledResidualNorm = m, s.convNorm
		return
	}
	res.ResidualNorm, res.ScaledResidualNorm = math.NaN(), math.NaN()
	if err := s.residual(s.ftry, res.X); err == nil {
		m := 0.0
		for _, v := range s.ftry {
			m = max(m, math.Abs(v))
		}
		res.ResidualNorm = m
		if s.scaled {
			res.ScaledResidualNorm = s.normOf(s.ftry)
		}
	}
}

// fail builds the NotConverged error at x, the best point reached.
func (s *solver) fail(res *Result, x []float64, out outcome, m method) (*Result, error) {
	copyf(res.X, x)
	res.Status = out.status
	setMethod(res, m)
	if !s.scaled {
		for i := range s.scale {
			s.scale[i] = 1
		}
		s.scaled = true
	}
	s.finish(res)
	nc := &NotConverged{Status: out.status, Iterations: s.iters, Norm: res.ScaledResidualNorm,
		Reason: out.reason, Err: out.err}
	// The worst equations, and the unknowns that weigh most in them.
	var worstRows []int
	haveJ := s.evalAt(x) == nil
	if haveJ {
		copy(s.f, s.cf)
	}
	if haveJ {
		order := seq(s.n)
		sc := func(i int) float64 { return math.Abs(s.f[i] / s.scale[i]) }
		sort.SliceStable(order, func(a, b int) bool { return sc(order[a]) > sc(order[b]) })
		for _, i := range order[:min(3, len(order))] {
			if sc(i) == 0 {
				break
			}
			worstRows = append(worstRows, i)
			nc.Worst = append(nc.Worst, Worst{Equation: s.eqName(i), Residual: s.f[i], Scaled: s.f[i] / s.scale[i]})
		}
	}
	seen := map[int]bool{}
	if out.bad >= 0 {
		seen[out.bad] = true
		nc.WorstUnknowns = append(nc.WorstUnknowns, s.varName(out.bad))
	}
	if haveJ && len(nc.Worst) > 0 {
		p := s.prob
		for _, i := range worstRows[:min(2, len(worstRows))] {
			type cand struct {
				j int
				w float64
			}
			var cs []cand
			for k := p.RowPtr[i]; k < p.RowPtr[i+1]; k++ {
				cs = append(cs, cand{p.ColIdx[k], math.Abs(s.jval[k]) * s.typ[p.ColIdx[k]]})
			}
			sort.SliceStable(cs, func(a, b int) bool { return cs[a].w > cs[b].w })
			for _, c := range cs[:min(2, len(cs))] {
				if !seen[c.j] {
					seen[c.j] = true
					nc.WorstUnknowns = append(nc.WorstUnknowns, s.varName(c.j))
				}
			}
		}
	}
	switch out.status {
	case SingularJacobian:
		nc.Hint = "Check that the specifications fix the unknowns named (a flow or a composition may have gone to zero), and their starting guesses"
	case HitBound:
		nc.Hint = "The solution may lie beyond that bound: check the unknown's min and max, and the specifications"
	case EvalFailed:
		nc.Hint = "A formula cannot be evaluated where the solver went: give guesses or bounds that keep its argument in its domain"
	default:
		nc.Hint = "Check the starting guesses of the unknowns named, their bounds, and that the specifications can be met together"
	}
	return res, nc
}

func (s *solver) structuralFailure(res *Result, st *structure.Structure) (*Result, error) {
	var eqs, vars []string
	for _, e := range st.OverEquations {
		eqs = append(eqs, s.eqName(e))
	}
	for _, u := range st.UnderUnknowns {
		vars = append(vars, s.varName(u))
	}
	reason := "the equations cannot fix the unknowns whatever their values (structurally singular)"
	var hint []string
	if len(eqs) > 0 {
		hint = append(hint, fmt.Sprintf("equations %s over-determine unknowns %s: remove a specification among them",
			strings.Join(eqs, ", "), strings.Join(names(st.OverUnknowns, s.varName), ", ")))
	}
	if len(vars) > 0 {
		hint = append(hint, fmt.Sprintf("unknowns %s are not fixed by equations %s: add an equation or a specification for them",
			strings.Join(vars, ", "), strings.Join(names(st.UnderEquations, s.eqName), ", ")))
	}
	res.Status = StructurallySingular
	setMethod(res, structureMethod)
	res.Iterations, res.StepNorm = 0, 0
	res.ResidualNorm, res.ScaledResidualNorm = math.NaN(), math.NaN()
	return res, &NotConverged{Status: StructurallySingular, Norm: math.NaN(), Reason: reason,
		WorstUnknowns: vars, Hint: strings.Join(hint, "; ")}
}

func names(idx []int, name func(int) string) []string {
	out := make([]string, len(idx))
	for i, k := range idx {
		out[i] = name(k)
	}
	return out
}

// value formats a value of unknown j for messages.
func (s *solver) value(j int, v float64) string {
	if s.prob.FormatValue != nil && j >= 0 {
		return s.prob.FormatValue(j, v)
	}
	return fmt.Sprintf("%g", v)
}

func (s *solver) varName(j int) string {
	if j < 0 {
		return "(unknown)"
	}
	if j < len(s.prob.VarNames) {
		return s.prob.VarNames[j]
	}
	return fmt.Sprintf("unknown %d", j)
}

func (s *solver) eqName(i int) string {
	if i < len(s.prob.EqNames) {
		return s.prob.EqNames[i]
	}
	return fmt.Sprintf("equation %d", i)
}

func seq(n int) []int {
	s := make([]int, n)
	for i := range s {
		s[i] = i
	}
	return s
}

func filled(n, v int) []int {
	s := make([]int, n)
	for i := range s {
		s[i] = v
	}
	return s
}
