package solve

import (
	"context"
	"fmt"
	"math"
	"path/filepath"
	"testing"

	"github.com/loopwright/loopwright/jacobian"
	"github.com/loopwright/loopwright/model"
)

// traced returns a copy of p whose functions log every evaluation (which
// function, and the point to the bit) into *log.
func traced(p *Problem, log *[]uint64) *Problem {
	q := *p
	note := func(kind uint64, x []float64) {
		*log = append(*log, kind)
		for _, v := range x {
			*log = append(*log, math.Float64bits(v))
		}
	}
	q.Residual = func(f, x []float64) error { note(1, x); return p.Residual(f, x) }
	q.ResidualJacobian = func(f, jval, x []float64) error { note(2, x); return p.ResidualJacobian(f, jval, x) }
	return &q
}

// sameResult reports how two results differ, to the bit; "" when they do not.
func sameResult(a, b *Result) string {
	bits := func(v float64) uint64 { return math.Float64bits(v) }
	switch {
	case len(a.X) != len(b.X):
		return "X lengths"
	case a.Status != b.Status || a.Iterations != b.Iterations || a.Method != b.Method || a.Blocks != b.Blocks:
		return fmt.Sprintf("status %v/%v iterations %d/%d method %q/%q blocks %d/%d",
			a.Status, b.Status, a.Iterations, b.Iterations, a.Method, b.Method, a.Blocks, b.Blocks)
	case bits(a.ResidualNorm) != bits(b.ResidualNorm) || bits(a.ScaledResidualNorm) != bits(b.ScaledResidualNorm) || bits(a.StepNorm) != bits(b.StepNorm):
		return fmt.Sprintf("norms %v %v %v / %v %v %v", a.ResidualNorm, a.ScaledResidualNorm, a.StepNorm, b.ResidualNorm, b.ScaledResidualNorm, b.StepNorm)
	}
	for j := range a.X {
		if bits(a.X[j]) != bits(b.X[j]) {
			return fmt.Sprintf("X[%d] %v / %v", j, a.X[j], b.X[j])
		}
	}
	return ""
}

// leanPair runs the same sequence of solves on two Solvers of p, one that
// may use the lean run and one that never does, and fails on the first
// difference in the results, the errors or the evaluations.
type leanPair struct {
	t          *testing.T
	name       string
	lean, gen  *Solver
	logL, logG []uint64
	into       Result
}

func newLeanPair(t *testing.T, name string, p *Problem, keep bool) *leanPair {
	lp := &leanPair{t: t, name: name}
	lp.lean = NewSolver(traced(p, &lp.logL))
	lp.gen = NewSolver(traced(p, &lp.logG))
	lp.gen.general = true
	lp.lean.KeepPivots, lp.gen.KeepPivots = keep, keep
	return lp
}

// solve solves from x0 with both, the lean one by SolveInto into storage
// reused from call to call, and returns the general one's result.
func (lp *leanPair) solve(what string, x0 []float64, opts *Options) (*Result, error) {
	lp.t.Helper()
	lp.logL, lp.logG = lp.logL[:0], lp.logG[:0]
	rg, errG := lp.gen.Solve(context.Background(), x0, opts)
	errL := lp.lean.SolveInto(context.Background(), &lp.into, x0, opts)
	rl := &lp.into
	msg := func(err error) string {
		if err == nil {
			return "<nil>"
		}
		return err.Error()
	}
	if d := sameResult(rl, rg); d != "" {
		lp.t.Fatalf("%s, %s: lean and general results differ: %s", lp.name, what, d)
	}
	if msg(errL) != msg(errG) {
		lp.t.Fatalf("%s, %s: errors differ:\nlean    %s\ngeneral %s", lp.name, what, msg(errL), msg(errG))
	}
	if len(lp.logL) != len(lp.logG) {
		lp.t.Fatalf("%s, %s: %d and %d logged words of evaluations", lp.name, what, len(lp.logL), len(lp.logG))
	}
	for k := range lp.logL {
		if lp.logL[k] != lp.logG[k] {
			lp.t.Fatalf("%s, %s: the evaluations differ at word %d", lp.name, what, k)
		}
	}
	jl, errJL := lp.lean.Jacobian(rl.X)
	jg, errJG := lp.gen.Jacobian(rg.X)
	if (errJL == nil) != (errJG == nil) || errJL == nil && !sameBits(jl, jg) {
		lp.t.Fatalf("%s, %s: the Jacobians at the results differ", lp.name, what)
	}
	return rg, errG
}

// sweepLike solves cold from x0, then warm as a sweep's corrector does from
// the solution moved by several relative amounts (within, at and beyond the
// bounds), and with an iteration limit that stops it.
func (lp *leanPair) sweepLike(x0 []float64) {
	res, err := lp.solve("cold", x0, nil)
	if err != nil {
		lp.t.Logf("%s: cold solve: %v", lp.name, err)
		return
	}
	sol := append([]float64(nil), res.X...)
	fast := &Options{NoBlocks: true, NoHomotopy: true, MaxIter: 8}
	for _, rel := range []float64{1e-9, 1e-6, 1e-4, 1e-2, 0.1, 0.5, 1, 3} {
		for sign := -1.0; sign <= 1; sign += 2 {
			x := make([]float64, len(sol))
			for j, v := range sol {
				x[j] = v * (1 + sign*rel*float64(1+j%3)/2)
				if j%2 == 1 {
					x[j] = v * (1 - sign*rel)
				}
			}
			what := fmt.Sprintf("warm from %+g", sign*rel)
			lp.solve(what, x, fast)
			lp.solve(what+", one iteration", x, &Options{NoBlocks: true, NoHomotopy: true, MaxIter: 1})
			lp.solve(what+", no blocks", x, &Options{NoBlocks: true})
		}
	}
	lp.solve("cold again", x0, nil)
}

func modelProblem(t *testing.T, file string) (*Problem, []float64) {
	t.Helper()
	f, err := model.LoadFile(file)
	if err != nil {
		t.Fatal(err)
	}
	sys, err := f.Expand(nil)
	if err != nil {
		t.Fatal(err)
	}
	prog, err := jacobian.Compile(sys)
	if err != nil {
		t.Fatal(err)
	}
	p := make([]float64, len(sys.Params))
	for k, s := range sys.Params {
		p[k] = s.Value
	}
	x0 := make([]float64, len(sys.Unknowns))
	for j, s := range sys.Unknowns {
		x0[j] = s.Value
	}
	return ProblemFor(prog, sys, p), x0
}

// TestLeanRunMatchesRun compares the lean run with the general one, bit
// for bit and evaluation by evaluation, on the models of testdata and of
// the library's templates, solved as a sweep solves them, and on small
// problems that end in each kind of failure or step against a bound.
func TestLeanRunMatchesRun(t *testing.T) {
	files, _ := filepath.Glob(filepath.Join("..", "library", "templates", "*.yaml"))
	files = append(files, filepath.Join("..", "testdata", "models", "syrup.yaml"), filepath.Join("..", "testdata", "models", "column.yaml"))
	for _, file := range files {
		p, x0 := modelProblem(t, file)
		for _, keep := range []bool{true, false} {
			newLeanPair(t, fmt.Sprintf("%s (keep pivots %v)", file, keep), p, keep).sweepLike(x0)
		}
		// As the sweep builds it: no typical sizes, taken from each start.
		q := *p
		q.Typical = nil
		newLeanPair(t, file+" (no typical sizes)", &q, true).sweepLike(x0)
	}
	t.Logf("%d model files", len(files))
	newLeanPair(t, "column A", columnA.problem(), true).sweepLike(constant(41, 0.5))

	one := func(res func(f, x []float64), jac func(i, j int, x []float64) float64, lo, hi float64) *Problem {
		p := testProblem([][]int{{0}}, res, jac)
		p.Lower, p.Upper = []float64{lo}, []float64{hi}
		return p
	}
	cases := []struct {
		name string
		p    *Problem
		x0   []float64
	}{
		{"no solution", one(func(f, x []float64) { f[0] = x[0]*x[0] + 1 }, func(_, _ int, x []float64) float64 { return 2 * x[0] }, math.Inf(-1), math.Inf(1)), []float64{1}},
		{"beyond a bound", one(func(f, x []float64) { f[0] = x[0] + 1 }, func(_, _ int, _ []float64) float64 { return 1 }, 0, 10), []float64{5}},
		{"guess on a bound", one(func(f, x []float64) { f[0] = x[0]*(x[0]+1) - 2 }, func(_, _ int, x []float64) float64 { return 2*x[0] + 1 }, 0, math.Inf(1)), []float64{0}},
		{"flat far away", one(func(f, x []float64) { f[0] = math.Atan(x[0] - 1) }, func(_, _ int, x []float64) float64 { return 1 / (1 + (x[0]-1)*(x[0]-1)) }, math.Inf(-1), math.Inf(1)), []float64{100}},
		{"not finite", one(func(f, x []float64) { f[0] = math.Log(x[0]) + 3 }, func(_, _ int, x []float64) float64 { return 1 / x[0] }, math.Inf(-1), math.Inf(1)), []float64{2}},
		{"near an upper bound", one(func(f, x []float64) { f[0] = x[0] - 0.999 }, func(_, _ int, _ []float64) float64 { return 1 }, 0, 1), []float64{0.5}},
		{"beyond an upper bound", one(func(f, x []float64) { f[0] = math.Exp(x[0]) - 3 }, func(_, _ int, x []float64) float64 { return math.Exp(x[0]) }, -1, 1), []float64{0.2}},
		{"singular", testProblem([][]int{{0, 1}, {0, 1}},
			func(f, x []float64) { f[0] = x[0] + x[1] - 1; f[1] = 2*x[0] + 2*x[1] - 3 },
			func(i, _ int, _ []float64) float64 { return float64(i + 1) }), []float64{0, 0}},
		{"circle and line", testProblem([][]int{{0, 1}, {0, 1}},
			func(f, x []float64) { f[0] = x[0]*x[0] + x[1]*x[1] - 4; f[1] = x[0] - 3*x[1] },
			func(i, j int, x []float64) float64 {
				if i == 0 {
					return 2 * x[j]
				}
				return []float64{1, -3}[j]
			}), []float64{5, 0.1}},
	}
	for _, c := range cases {
		for _, opts := range []*Options{nil, {NoBlocks: true}, {NoBlocks: true, NoHomotopy: true, MaxIter: 8}, {MaxIter: 2}} {
			lp := newLeanPair(t, c.name, c.p, true)
			lp.solve(fmt.Sprintf("options %+v", opts), c.x0, opts)
			lp.solve(fmt.Sprintf("options %+v, again", opts), c.x0, opts)
		}
	}
}

// TestSolveIntoStorage: SolveInto writes the point into dst.X's backing
// array when it is large enough (and into a new slice when not), accepts
// x0 as dst.X itself, gives what Solve gives, and allocates nothing on a
// warm solve of a small system.
func TestSolveIntoStorage(t *testing.T) {
	p, x0 := modelProblem(t, filepath.Join("..", "testdata", "models", "syrup.yaml"))
	q := *p
	q.Typical = nil
	ref, err := NewSolver(&q).Solve(context.Background(), x0, nil)
	if err != nil {
		t.Fatal(err)
	}
	sol := NewSolver(&q)
	buf := make([]float64, 5)
	res := Result{X: buf[1:1]}
	if err := sol.SolveInto(context.Background(), &res, x0, nil); err != nil {
		t.Fatal(err)
	}
	if d := sameResult(&res, ref); d != "" {
		t.Fatalf("SolveInto and Solve differ: %s", d)
	}
	if &res.X[0] != &buf[1] || len(res.X) != 2 {
		t.Errorf("the point is not in the storage given")
	}
	small := Result{X: make([]float64, 1)}
	if err := sol.SolveInto(context.Background(), &small, x0, nil); err != nil || len(small.X) != 2 || sameResult(&small, ref) != "" {
		t.Errorf("with too little storage: %v, %v", err, small.X)
	}
	same := Result{X: append([]float64(nil), x0...)}
	if err := sol.SolveInto(context.Background(), &same, same.X, nil); err != nil || sameResult(&same, ref) != "" {
		t.Errorf("with x0 = dst.X: %v, %v (want %v)", err, same.X, ref.X)
	}

	sol.KeepPivots = true
	warm := []float64{ref.X[0] * (1 + 1e-4), ref.X[1] * (1 - 1e-4)}
	fast := &Options{NoBlocks: true, NoHomotopy: true, MaxIter: 8}
	allocs := testing.AllocsPerRun(20, func() {
		if err := sol.SolveInto(context.Background(), &res, warm, fast); err != nil {
			t.Fatal(err)
		}
	})
	if allocs != 0 {
		t.Errorf("a warm SolveInto allocates %v times", allocs)
	}
}
