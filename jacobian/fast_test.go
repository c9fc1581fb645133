package jacobian

import (
	"fmt"
	"math"
	"math/rand/v2"
	"sort"
	"testing"

	"gonum.org/v1/gonum/mat"

	"github.com/loopwright/loopwright/model"
)

// evalCall is one method of Eval as the tests of the fast paths call it:
// it evaluates at (x, p) into fresh destinations poisoned with NaN and
// returns everything it wrote, with its error.
type evalCall struct {
	name string
	call func(e *Eval, x, p []float64) ([]float64, error)
}

func evalCalls(prog *Program, cols []int) []evalCall {
	neq, nout, nx := prog.NumEquations(), prog.NumOutputs(), prog.NumUnknowns()
	values := func(n int, f func(e *Eval, dst, x, p []float64) error) func(e *Eval, x, p []float64) ([]float64, error) {
		return func(e *Eval, x, p []float64) ([]float64, error) {
			dst := nanSlice(n)
			return dst, f(e, dst, x, p)
		}
	}
	calls := []evalCall{
		{"Residual", values(neq, (*Eval).Residual)},
		{"Outputs", values(nout, (*Eval).Outputs)},
		{"Defines", values(prog.NumDefines(), (*Eval).Defines)},
		{"Checks", values(prog.NumChecks(), (*Eval).Checks)},
		{"ResidualJacobian", func(e *Eval, x, p []float64) ([]float64, error) {
			f, jac := nanSlice(neq), prog.NewJacobian()
			copy(jac.Val, nanSlice(len(jac.Val)))
			err := e.ResidualJacobian(f, jac, x, p)
			return append(f, jac.Val...), err
		}},
	}
	if neq > 0 && len(cols) > 0 {
		calls = append(calls, evalCall{"ParamJacobian", func(e *Eval, x, p []float64) ([]float64, error) {
			dst := nanDense(neq, len(cols))
			err := e.ParamJacobian(dst, x, p, cols)
			return dst.RawMatrix().Data, err
		}})
	}
	if nout > 0 && nx > 0 {
		calls = append(calls, evalCall{"OutputGradients dx", func(e *Eval, x, p []float64) ([]float64, error) {
			dx := nanDense(nout, nx)
			err := e.OutputGradients(dx, nil, x, p, nil)
			return dx.RawMatrix().Data, err
		}})
		if len(cols) > 0 {
			calls = append(calls, evalCall{"OutputGradients", func(e *Eval, x, p []float64) ([]float64, error) {
				dx, dp := nanDense(nout, nx), nanDense(nout, len(cols))
				err := e.OutputGradients(dx, dp, x, p, cols)
				return append(dx.RawMatrix().Data, dp.RawMatrix().Data...), err
			}})
		}
	}
	return calls
}

// TestKeptValues calls the methods of one Eval in a random order at a few
// points, each several times in a row, changing x or p in place between
// points (as a solver does), and compares every result and error, bit for
// bit, with those of a new Eval, which has no values kept from an earlier
// call: the values an Eval keeps for a point are used only at that point.
func TestKeptValues(t *testing.T) {
	for name, sys := range bitSystems(t) {
		t.Run(name, func(t *testing.T) {
			prog := mustCompile(t, sys)
			x0, p0 := guess(sys)
			rnd := rand.New(rand.NewPCG(7, 11))
			// The parameters in a mixed order, with one repeated, as the
			// sweep asks for the inputs and then the axes.
			var cols []int
			for k := range prog.NumParams() {
				if k%2 == 0 {
					cols = append(cols, k)
				}
			}
			if len(cols) > 0 {
				cols = append(cols, cols[0])
			}
			calls := evalCalls(prog, cols)
			e := prog.NewEval()
			x, p := make([]float64, len(x0)), make([]float64, len(p0))
			copy(x, x0)
			copy(p, p0)
			for step := range 200 {
				switch rnd.IntN(4) {
				case 0: // move x a little, in place
					i := rnd.IntN(max(len(x), 1))
					if i < len(x) {
						x[i] = x0[i] * (1 + 0.01*(2*rnd.Float64()-1))
					}
				case 1: // or p
					i := rnd.IntN(max(len(p), 1))
					if i < len(p) {
						p[i] = p0[i] * (1 + 0.01*(2*rnd.Float64()-1))
					}
				case 2: // a zero of the other sign: equal as numbers, not as bits
					if len(x) > 0 {
						x[0] = math.Copysign(0, -math.Copysign(1, x[0]))
					}
				}
				c := calls[rnd.IntN(len(calls))]
				for rep := range 1 + rnd.IntN(3) {
					got, err := c.call(e, x, p)
					want, werr := c.call(prog.NewEval(), x, p)
					if g, w := errString(err), errString(werr); g != w {
						t.Fatalf("step %d.%d %s: error %q, new Eval %q", step, rep, c.name, g, w)
					}
					if i, ok := sameBits(got, want); !ok {
						t.Fatalf("step %d.%d %s: element %d is %v, new Eval %v", step, rep, c.name, i, got[i], want[i])
					}
				}
			}
		})
	}
}

// TestGradFastPath compares the rows ParamJacobian and OutputGradients
// gather through their plans (grad) with those of the general path
// (gradRows) at the same points, bit for bit, on every model: the plan's
// indices pick the same derivatives the general path scatters and gathers.
func TestGradFastPath(t *testing.T) {
	names := make([]string, 0)
	systems := bitSystems(t)
	for name := range systems {
		names = append(names, name)
	}
	sort.Strings(names)
	for _, name := range names {
		sys := systems[name]
		t.Run(name, func(t *testing.T) {
			prog := mustCompile(t, sys)
			x, p := guess(sys)
			neq, nout, nx, np := prog.NumEquations(), prog.NumOutputs(), prog.NumUnknowns(), prog.NumParams()
			if np == 0 {
				t.Skip("no parameters")
			}
			colSets := [][]int{{0}, {np - 1, 0, np - 1}}
			all := make([]int, np)
			for k := range all {
				all[k] = np - 1 - k
			}
			colSets = append(colSets, all)
			fast, slow := prog.NewEval(), prog.NewEval()
			for _, cols := range colSets {
				for trial := range 3 {
					xt := make([]float64, nx)
					for i, v := range x {
						xt[i] = v * (1 + 0.001*float64(trial))
					}
					what := fmt.Sprint(cols, " trial ", trial)
					if neq > 0 {
						got, want := nanDense(neq, len(cols)), nanDense(neq, len(cols))
						err := fast.ParamJacobian(got, xt, p, cols)
						slow.check(xt, p)
						rev := prog.eqRev
						rev.p = flatten(paramBatches(prog.eqs, rev.sweeps, cols, np))
						werr := slow.gradRows(nil, want, prog.eqs, prog.eqFwd, &rev, &rev.p, cols)
						compareDense(t, "ParamJacobian "+what, got, want, err, werr)
					}
					if nout > 0 && nx > 0 {
						gx, gp, wx, wp := nanDense(nout, nx), nanDense(nout, len(cols)), nanDense(nout, nx), nanDense(nout, len(cols))
						err := fast.OutputGradients(gx, gp, xt, p, cols)
						slow.check(xt, p)
						werr := slow.gradRows(wx, wp, prog.outs, prog.outFwd, &prog.outRev, &prog.outRev.all, cols)
						compareDense(t, "OutputGradients dx "+what, gx, wx, err, werr)
						compareDense(t, "OutputGradients dp "+what, gp, wp, err, werr)
					}
				}
			}
		})
	}
}

func compareDense(t *testing.T, what string, got, want *mat.Dense, err, werr error) {
	t.Helper()
	if g, w := errString(err), errString(werr); g != w {
		t.Errorf("%s: error %q, general path %q", what, g, w)
	}
	if i, ok := sameBits(got.RawMatrix().Data, want.RawMatrix().Data); !ok {
		t.Errorf("%s: element %d is %v, general path %v", what, i, got.RawMatrix().Data[i], want.RawMatrix().Data[i])
	}
}

// plainTapes is an invented system whose outputs, defines, checks and one
// equation are a plain unknown, a plain parameter or a constant (some only
// after compiling: x+0 and x*1 are x), beside ones that are not.
func plainTapes() *model.System {
	b := &builder{file: "plain.yaml", line: 1}
	sys := &model.System{
		Name:     "plain",
		File:     "plain.yaml",
		Unknowns: unknowns("x0", "x1"),
		Params: []model.Symbol{
			{Name: "p0", Base: "p0", Role: model.RoleParameter, Value: 2},
			{Name: "p1", Base: "p1", Role: model.RoleParameter, Value: 3},
			{Name: "p2", Base: "p2", Role: model.RoleParameter, Value: 4},
		},
	}
	sys.Equations = []model.Equation{
		{Name: "e0", Residual: b.sub(b.x(0), b.mul(b.p(0), b.x(1))), Pos: b.pos()},
		{Name: "e1", Residual: b.mul(b.x(1), b.num(1)), Pos: b.pos()},
	}
	sys.Outputs = []model.Output{
		{Name: "o0", Expr: b.x(1), Pos: b.pos()},
		{Name: "o1", Expr: b.p(2), Pos: b.pos()},
		{Name: "o2", Expr: b.num(3.5), Pos: b.pos()},
		{Name: "o3", Expr: b.mul(b.x(0), b.x(1)), Pos: b.pos()},
		{Name: "o4", Expr: b.add(b.x(0), b.num(0)), Pos: b.pos()},
	}
	sys.Defines = []model.Output{{Name: "d0", Expr: b.x(0), Pos: b.pos()}}
	sys.Checks = []model.Check{{Name: "c0", Expr: b.p(1), Min: 0, Max: 1, Pos: b.pos()}}
	return sys
}

// TestPlainTapes checks the derivatives of tapes that are a plain unknown,
// parameter or constant, which the plans read from the one and zero slots
// of d without running their (empty) sweeps, against the general path
// (gradRows), bit for bit, errors included, at points holding -0, +0, NaN
// and infinities; and that with only such outputs OutputGradients runs no
// reverse steps.
func TestPlainTapes(t *testing.T) {
	sys := plainTapes()
	prog := mustCompile(t, sys)
	nx, np, neq, nout := prog.NumUnknowns(), prog.NumParams(), prog.NumEquations(), prog.NumOutputs()
	vals := []float64{0.5, math.Copysign(0, -1), 0, math.NaN(), math.Inf(1), -1.25}
	fast, slow := prog.NewEval(), prog.NewEval()
	for _, cols := range [][]int{{2, 0, 2}, {1}, {0, 1, 2}} {
		for trial := range 40 {
			x, p := make([]float64, nx), make([]float64, np)
			for i := range x {
				x[i] = vals[(trial+i)%len(vals)]
			}
			for i := range p {
				p[i] = vals[(trial/len(vals)+2*i)%len(vals)]
			}
			what := fmt.Sprint(cols, " x ", x, " p ", p)
			got, want := nanDense(neq, len(cols)), nanDense(neq, len(cols))
			err := fast.ParamJacobian(got, x, p, cols)
			slow.check(x, p)
			rev := prog.eqRev
			rev.p = flatten(paramBatches(prog.eqs, rev.sweeps, cols, np))
			werr := slow.gradRows(nil, want, prog.eqs, prog.eqFwd, &rev, &rev.p, cols)
			compareDense(t, "ParamJacobian "+what, got, want, err, werr)

			gx, gp, wx, wp := nanDense(nout, nx), nanDense(nout, len(cols)), nanDense(nout, nx), nanDense(nout, len(cols))
			err = fast.OutputGradients(gx, gp, x, p, cols)
			slow.check(x, p)
			werr = slow.gradRows(wx, wp, prog.outs, prog.outFwd, &prog.outRev, &prog.outRev.all, cols)
			compareDense(t, "OutputGradients dx "+what, gx, wx, err, werr)
			compareDense(t, "OutputGradients dp "+what, gp, wp, err, werr)

			gx, wx = nanDense(nout, nx), nanDense(nout, nx)
			err = fast.OutputGradients(gx, nil, x, p, nil)
			slow.check(x, p)
			werr = slow.gradRows(wx, nil, prog.outs, prog.outFwd, &prog.outRev, &prog.outRev.x, nil)
			compareDense(t, "OutputGradients dx only "+what, gx, wx, err, werr)

			// The values are those of the symbols, to the bit.
			y := nanSlice(nout)
			if err := fast.Outputs(y, x, p); err == nil {
				for i, w := range []float64{x[1], p[2], 3.5, x[0] * x[1], x[0]} {
					if math.Float64bits(y[i]) != math.Float64bits(w) {
						t.Errorf("Outputs %s: y[%d] = %v, want %v", what, i, y[i], w)
					}
				}
			} else if finite(x[0]*x[1]) && finite(p[2]) {
				t.Errorf("Outputs %s: %v", what, err)
			}
		}
	}

	// Only plain outputs (as the syrup blender's): no reverse steps, no
	// derivative checked, unit rows.
	sys.Outputs = sys.Outputs[:3]
	prog = mustCompile(t, sys)
	e := prog.NewEval()
	dx, dp := nanDense(3, nx), nanDense(3, 2)
	x, p := []float64{math.Copysign(0, -1), 7}, []float64{1, 2, 3}
	if err := e.OutputGradients(dx, dp, x, p, []int{2, 0}); err != nil {
		t.Fatal(err)
	}
	if e.og.needRev || len(e.og.dIdx) != 0 || e.og.xIdx == nil {
		t.Errorf("plain outputs: plan needs reverse steps %v, checks %d derivatives, dense dx %v; want none, none, dense", e.og.needRev, len(e.og.dIdx), e.og.xIdx != nil)
	}
	wantX := []float64{0, 1, 0, 0, 0, 0}
	wantP := []float64{0, 0, 1, 0, 0, 0}
	if i, ok := sameBits(dx.RawMatrix().Data, wantX); !ok {
		t.Errorf("plain outputs: dx element %d = %v, want %v", i, dx.RawMatrix().Data[i], wantX[i])
	}
	if i, ok := sameBits(dp.RawMatrix().Data, wantP); !ok {
		t.Errorf("plain outputs: dp element %d = %v, want %v", i, dp.RawMatrix().Data[i], wantP[i])
	}
}

// TestCheckedGather checks what the fast paths that check derivatives as
// they gather them (ResidualJacobian, ParamJacobian) leave in their
// destinations when a derivative is infinite while every value is finite
// (sqrt at 0): for dF/dp, the general path's (gradRows) numbers bit for
// bit; for dF/dx, the residuals up to the failing row and the entries before the failing one set,
// the entries from it on untouched, as the row-by-row path leaves them.
// An invented system.
func TestCheckedGather(t *testing.T) {
	b := &builder{file: "gather.yaml", line: 1}
	sys := &model.System{
		Name:     "gather",
		File:     "gather.yaml",
		Unknowns: unknowns("x0", "x1"),
		Params: []model.Symbol{
			{Name: "p0", Base: "p0", Role: model.RoleParameter, Value: 0},
			{Name: "p1", Base: "p1", Role: model.RoleParameter, Value: 3},
		},
	}
	sys.Equations = []model.Equation{
		{Name: "e0", Residual: b.sub(b.mul(b.x(0), b.p(1)), b.call(model.FnSqrt, b.x(1))), Pos: b.pos()},
		{Name: "e1", Residual: b.sub(b.x(1), b.call(model.FnSqrt, b.p(0))), Pos: b.pos()},
	}
	prog := mustCompile(t, sys)
	const sentinel = 12345.0
	for _, tc := range []struct {
		x, p []float64
		ok   bool
	}{
		{[]float64{2, 4}, []float64{1, 3}, true},
		{[]float64{2, 0}, []float64{1, 3}, false}, // d e0/d x1 infinite
		{[]float64{2, 4}, []float64{0, 3}, true},  // dF/dx finite, d e1/d p0 infinite
	} {
		e := prog.NewEval()
		f := []float64{sentinel, sentinel}
		jac := prog.NewJacobian()
		for k := range jac.Val {
			jac.Val[k] = sentinel
		}
		err := e.ResidualJacobian(f, jac, tc.x, tc.p)
		if (err == nil) != tc.ok {
			t.Fatalf("x %v p %v: ResidualJacobian error %v, want ok = %v", tc.x, tc.p, err, tc.ok)
		}
		wantF := []float64{tc.x[0]*tc.p[1] - math.Sqrt(tc.x[1]), tc.x[1] - math.Sqrt(tc.p[0])}
		if !tc.ok {
			wantF[1] = sentinel // the row-by-row path stops at row 0
		}
		if i, ok := sameBits(f, wantF); !ok {
			t.Errorf("x %v p %v: f[%d] = %v, want %v", tc.x, tc.p, i, f[i], wantF[i])
		}
		// Pattern: row 0 (x0, x1), row 1 (x1).
		wantJ := []float64{tc.p[1], -(0.5 / math.Sqrt(tc.x[1])), 1}
		if !tc.ok {
			wantJ = []float64{tc.p[1], sentinel, sentinel}
		}
		if i, ok := sameBits(jac.Val, wantJ); !ok {
			t.Errorf("x %v p %v: dF/dx entry %d = %v, want %v", tc.x, tc.p, i, jac.Val[i], wantJ[i])
		}
		for _, cols := range [][]int{{0, 1}, {1, 0, 1}} {
			got, want := nanDense(2, len(cols)), nanDense(2, len(cols))
			err := e.ParamJacobian(got, tc.x, tc.p, cols)
			slow := prog.NewEval()
			slow.check(tc.x, tc.p)
			rev := prog.eqRev
			rev.p = flatten(paramBatches(prog.eqs, rev.sweeps, cols, 2))
			werr := slow.gradRows(nil, want, prog.eqs, prog.eqFwd, &rev, &rev.p, cols)
			compareDense(t, fmt.Sprint("ParamJacobian ", cols, " x ", tc.x, " p ", tc.p), got, want, err, werr)
		}
	}
}
