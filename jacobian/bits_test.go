package jacobian

import (
	"fmt"
	"math"
	"math/rand/v2"
	"path/filepath"
	"testing"

	"gonum.org/v1/gonum/mat"

	"github.com/loopwright/loopwright/model"
)

// This file keeps the tape interpreter as it was before the tapes were
// lowered (one op per load, per-tape value and adjoint slots, commit
// da14112), as a reference: the fast evaluator must give the same bits for
// every value, every derivative but dF/dx and every partly filled
// destination, and the same errors. dF/dx (Jacobian, ResidualJacobian)
// preaccumulates shared subexpressions (preacc.go), which sums the same
// partial derivatives in another order: it must agree to 1e-13 relative to
// the largest entry of its row, and poisoned entries left unfilled must be
// left alike.

func refForward(t *tape, v, x, p []float64) float64 {
	v = v[:len(t.ops)]
	for k, o := range t.ops {
		switch o.code {
		case opVar:
			v[k] = x[o.a]
		case opParam:
			v[k] = p[o.a]
		case opConst:
			v[k] = o.c
		case opAdd:
			v[k] = v[o.a] + v[o.b]
		case opSub:
			v[k] = v[o.a] - v[o.b]
		case opMul:
			v[k] = v[o.a] * v[o.b]
		case opDiv:
			v[k] = v[o.a] / v[o.b]
		case opNeg:
			v[k] = -v[o.a]
		case opSq:
			a := v[o.a]
			v[k] = a * a
		case opPowC:
			v[k] = math.Pow(v[o.a], o.c)
		case opPow:
			v[k] = math.Pow(v[o.a], v[o.b])
		case opExp:
			v[k] = math.Exp(v[o.a])
		case opLog:
			v[k] = math.Log(v[o.a])
		case opLog10:
			v[k] = math.Log10(v[o.a])
		case opSqrt:
			v[k] = math.Sqrt(v[o.a])
		case opAbs:
			v[k] = math.Abs(v[o.a])
		case opMin:
			a, b := v[o.a], v[o.b]
			if b < a || b != b {
				a = b
			}
			v[k] = a
		case opMax:
			a, b := v[o.a], v[o.b]
			if b > a || b != b {
				a = b
			}
			v[k] = a
		default:
			panic(fmt.Sprintf("jacobian: unknown opcode %d", o.code))
		}
	}
	return v[t.root]
}

func refReverse(t *tape, d, v []float64) {
	d = d[:t.root+1]
	clear(d)
	d[t.root] = 1
	for k := int(t.root); k >= 0; k-- {
		g := d[k]
		if g == 0 {
			continue
		}
		o := t.ops[k]
		switch o.code {
		case opVar, opParam, opConst:
		case opAdd:
			d[o.a] += g
			d[o.b] += g
		case opSub:
			d[o.a] += g
			d[o.b] -= g
		case opMul:
			d[o.a] += g * v[o.b]
			d[o.b] += g * v[o.a]
		case opNeg:
			d[o.a] -= g
		case opDiv:
			q := g / v[o.b]
			d[o.a] += q
			d[o.b] -= q * v[k]
		default:
			da, db := refPartials(o, v, k)
			d[o.a] += g * da
			if o.code.binary() {
				d[o.b] += g * db
			}
		}
	}
}

func refPartials(o op, v []float64, k int) (da, db float64) {
	switch o.code {
	case opVar, opParam, opConst:
		return 0, 0
	case opAdd:
		return 1, 1
	case opSub:
		return 1, -1
	case opMul:
		return v[o.b], v[o.a]
	case opDiv:
		return 1 / v[o.b], -v[k] / v[o.b]
	case opNeg:
		return -1, 0
	case opSq:
		return 2 * v[o.a], 0
	case opPowC:
		return refPowPartial(v[o.a], o.c, v[k]), 0
	case opPow:
		a, b, r := v[o.a], v[o.b], v[k]
		da = refPowPartial(a, b, r)
		switch {
		case r == 0:
			db = 0
		default:
			db = r * math.Log(a)
		}
		return da, db
	case opExp:
		return v[k], 0
	case opLog:
		return 1 / v[o.a], 0
	case opLog10:
		return 1 / (v[o.a] * math.Ln10), 0
	case opSqrt:
		return 0.5 / v[k], 0
	case opAbs:
		if v[o.a] < 0 {
			return -1, 0
		}
		return 1, 0
	case opMin:
		if v[o.b] < v[o.a] {
			return 0, 1
		}
		return 1, 0
	case opMax:
		if v[o.b] > v[o.a] {
			return 0, 1
		}
		return 1, 0
	}
	panic(fmt.Sprintf("jacobian: unknown opcode %d", o.code))
}

func refPowPartial(a, c, r float64) float64 {
	switch {
	case c == 0:
		return 0
	case a != 0 && r != 0 && !math.IsInf(r, 0):
		return c * r / a
	}
	return c * math.Pow(a, c-1)
}

// refEval is the reference evaluator: Eval's methods as they were, on the
// source form of the tapes. Its errors are described by the same
// valueFault and derivFault.
type refEval struct {
	prog      *Program
	vals, adj []float64
	padj      []float64
}

func newRefEval(p *Program) *refEval {
	return &refEval{prog: p, vals: make([]float64, p.maxOps), adj: make([]float64, p.maxOps), padj: make([]float64, p.np)}
}

func (e *refEval) value(t *tape, x, p []float64) (float64, error) {
	r := refForward(t, e.vals, x, p)
	if !finite(r) {
		return r, t.valueFault(e.vals)
	}
	return r, nil
}

func (e *refEval) values(dst []float64, tapes []*tape, x, p []float64) error {
	for i, t := range tapes {
		r, err := e.value(t, x, p)
		if err != nil {
			return err
		}
		dst[i] = r
	}
	return nil
}

func (e *refEval) gradient(t *tape, x, p []float64) (float64, error) {
	r, err := e.value(t, x, p)
	if err != nil {
		return r, err
	}
	refReverse(t, e.adj, e.vals)
	return r, nil
}

func (e *refEval) residualJacobian(f []float64, dst *Sparse, x, p []float64) error {
	pat := e.prog.pattern
	for i, t := range e.prog.eqs {
		r, err := e.gradient(t, x, p)
		if err != nil {
			return err
		}
		if f != nil {
			f[i] = r
		}
		row := dst.Val[pat.RowPtr[i]:pat.RowPtr[i+1]]
		for k, vr := range t.vars {
			d := e.adj[vr.slot]
			if !finite(d) {
				return t.derivFault(e.vals, e.adj, e.prog.xNames[vr.index])
			}
			row[k] = d
		}
	}
	return nil
}

func (e *refEval) gradRows(dx, dp *mat.Dense, tapes []*tape, x, p []float64, cols []int) error {
	for i, t := range tapes {
		if _, err := e.gradient(t, x, p); err != nil {
			return err
		}
		if dx != nil {
			row := dx.RawRowView(i)
			clear(row)
			for _, vr := range t.vars {
				d := e.adj[vr.slot]
				if !finite(d) {
					return t.derivFault(e.vals, e.adj, e.prog.xNames[vr.index])
				}
				row[vr.index] = d
			}
		}
		if dp != nil {
			for _, vr := range t.params {
				e.padj[vr.index] = e.adj[vr.slot]
			}
			var bad int32 = -1
			for k, c := range cols {
				d := e.padj[c]
				if !finite(d) && bad < 0 {
					bad = int32(c)
				}
				dp.Set(i, k, d)
			}
			for _, vr := range t.params {
				e.padj[vr.index] = 0
			}
			if bad >= 0 {
				return t.derivFault(e.vals, e.adj, e.prog.pNames[bad])
			}
		}
	}
	return nil
}

// sameBits reports the first index where a and b differ in their bits.
func sameBits(a, b []float64) (int, bool) {
	if len(a) != len(b) {
		return -1, false
	}
	for i := range a {
		if math.Float64bits(a[i]) != math.Float64bits(b[i]) {
			return i, false
		}
	}
	return 0, true
}

// jacTol is the agreement asked of dF/dx with the reference, relative to
// the largest entry of the row.
const jacTol = 1e-13

// rowsAgree reports the first entry (and its row) where got and want, of
// the same pattern, differ by more than tol times the largest magnitude in
// want's row. Entries that are not finite (the NaN a destination was
// poisoned with, left unfilled) must have the same bits.
func rowsAgree(got, want *Sparse, tol float64) (int, int, bool) {
	for r := range want.Rows {
		lo, hi := want.RowPtr[r], want.RowPtr[r+1]
		var scale float64
		for _, w := range want.Val[lo:hi] {
			if finite(w) {
				scale = max(scale, math.Abs(w))
			}
		}
		for i := lo; i < hi; i++ {
			g, w := got.Val[i], want.Val[i]
			if !finite(g) || !finite(w) {
				if math.Float64bits(g) != math.Float64bits(w) {
					return i, r, false
				}
				continue
			}
			if math.Abs(g-w) > tol*scale {
				return i, r, false
			}
		}
	}
	return 0, 0, true
}

func errString(err error) string {
	if err == nil {
		return "<nil>"
	}
	return err.Error()
}

// compareBits evaluates everything Eval offers at (x, p) with e and with the
// reference, from destinations poisoned with the same NaN, and compares
// bits and errors.
func compareBits(t *testing.T, prog *Program, e *Eval, ref *refEval, x, p []float64) {
	t.Helper()
	check := func(what string, gotErr, wantErr error, got, want []float64) {
		t.Helper()
		if g, w := errString(gotErr), errString(wantErr); g != w {
			t.Errorf("%s: error %q, reference %q", what, g, w)
		}
		if i, ok := sameBits(got, want); !ok {
			t.Errorf("%s: element %d is %v (%#x), reference %v (%#x)", what, i, got[i], math.Float64bits(got[i]), want[i], math.Float64bits(want[i]))
		}
	}
	neq, nout := prog.NumEquations(), prog.NumOutputs()
	for _, g := range []struct {
		name  string
		n     int
		fn    func(dst, x, p []float64) error
		tapes []*tape
	}{
		{"Residual", neq, e.Residual, prog.eqs},
		{"Outputs", nout, e.Outputs, prog.outs},
		{"Defines", prog.NumDefines(), e.Defines, prog.defs},
		{"Checks", prog.NumChecks(), e.Checks, prog.checks},
	} {
		got, want := nanSlice(g.n), nanSlice(g.n)
		check(g.name, g.fn(got, x, p), ref.values(want, g.tapes, x, p), got, want)
	}

	checkJac := func(what string, gotErr, wantErr error, got, want *Sparse) {
		t.Helper()
		if g, w := errString(gotErr), errString(wantErr); g != w {
			t.Errorf("%s: error %q, reference %q", what, g, w)
		}
		if i, j, ok := rowsAgree(got, want, jacTol); !ok {
			g, w := got.Val[i], want.Val[i]
			t.Errorf("%s: element %d (row %d) is %v (%#x), reference %v (%#x)", what, i, j, g, math.Float64bits(g), w, math.Float64bits(w))
		}
	}
	f, wf := nanSlice(neq), nanSlice(neq)
	jac, wjac := prog.NewJacobian(), prog.NewJacobian()
	copy(jac.Val, nanSlice(len(jac.Val)))
	copy(wjac.Val, jac.Val)
	err, werr := e.ResidualJacobian(f, jac, x, p), ref.residualJacobian(wf, wjac, x, p)
	check("ResidualJacobian f", err, werr, f, wf)
	checkJac("ResidualJacobian J", err, werr, jac, wjac)
	copy(jac.Val, nanSlice(len(jac.Val)))
	copy(wjac.Val, jac.Val)
	err, werr = e.Jacobian(jac, x, p), ref.residualJacobian(nil, wjac, x, p)
	checkJac("Jacobian", err, werr, jac, wjac)

	// Every parameter, in reverse order to exercise the column mapping.
	cols := make([]int, prog.NumParams())
	for k := range cols {
		cols[k] = len(cols) - 1 - k
	}
	if neq > 0 && len(cols) > 0 {
		dp, wdp := nanDense(neq, len(cols)), nanDense(neq, len(cols))
		werr := ref.gradRows(nil, wdp, prog.eqs, x, p, cols)
		check("ParamJacobian", e.ParamJacobian(dp, x, p, cols), werr, dp.RawMatrix().Data, wdp.RawMatrix().Data)
		// A subset of the parameters runs only the steps leading to them:
		// every other one, then the first alone.
		for _, sub := range [][]int{everyOther(cols), cols[:1]} {
			sdp, swdp := nanDense(neq, len(sub)), nanDense(neq, len(sub))
			check(fmt.Sprintf("ParamJacobian %v", sub), e.ParamJacobian(sdp, x, p, sub), ref.gradRows(nil, swdp, prog.eqs, x, p, sub),
				sdp.RawMatrix().Data, swdp.RawMatrix().Data)
		}
	}
	if nout > 0 && prog.NumUnknowns() > 0 {
		dx, wdx := nanDense(nout, prog.NumUnknowns()), nanDense(nout, prog.NumUnknowns())
		var dp, wdp *mat.Dense
		if len(cols) > 0 {
			dp, wdp = nanDense(nout, len(cols)), nanDense(nout, len(cols))
		}
		err, werr := e.OutputGradients(dx, dp, x, p, cols), ref.gradRows(wdx, wdp, prog.outs, x, p, cols)
		check("OutputGradients dx", err, werr, dx.RawMatrix().Data, wdx.RawMatrix().Data)
		if dp != nil {
			check("OutputGradients dp", err, werr, dp.RawMatrix().Data, wdp.RawMatrix().Data)
		}
	}
}

func everyOther(s []int) []int {
	var out []int
	for i := 0; i < len(s); i += 2 {
		out = append(out, s[i])
	}
	return out
}

// bitSystems returns the systems the bit-for-bit test runs on: every model
// under testdata/models, every library template, the hand-built columns and
// one small system per operation.
func bitSystems(t *testing.T) map[string]*model.System {
	systems := map[string]*model.System{
		"binaryColumn(41)": binaryColumn(41, 21),
		"multiColumn(30)":  multiColumn(30, 15),
		"nestedOps":        nestedOps(),
		"sharedOps":        sharedOps(),
	}
	var files []string
	for _, pat := range []string{"../testdata/models/*.yaml", "../library/templates/*.yaml"} {
		m, err := filepath.Glob(pat)
		if err != nil {
			t.Fatal(err)
		}
		files = append(files, m...)
	}
	if len(files) == 0 {
		t.Fatal("no model files found under testdata/models or library/templates")
	}
	for _, file := range files {
		f, err := model.LoadFile(file)
		if err != nil {
			t.Fatalf("%s: load: %v", file, err)
		}
		sys, err := f.Expand(nil)
		if err != nil {
			t.Fatalf("%s: expand: %v", file, err)
		}
		systems[filepath.Base(filepath.Dir(file))+"/"+filepath.Base(file)] = sys
	}
	for _, c := range opCases {
		systems["op/"+c.name] = opSystem(c)
	}
	return systems
}

// TestBitsAgainstReference compares the evaluator with the reference
// interpreter above at the guess and at points moved further and further
// off it (some far enough to fail), with one Eval reused throughout so that
// state left by one call cannot leak into the next.
func TestBitsAgainstReference(t *testing.T) {
	for name, sys := range bitSystems(t) {
		t.Run(name, func(t *testing.T) {
			prog := mustCompile(t, sys)
			e, ref := prog.NewEval(), newRefEval(prog)
			x0, p0 := guess(sys)
			rnd := rand.New(rand.NewPCG(3, 5))
			x, p := make([]float64, len(x0)), make([]float64, len(p0))
			for trial := range 24 {
				copy(x, x0)
				copy(p, p0)
				step := 0.02 * float64(trial%8*(trial%8)) // 0, 2 %, 8 %, ... 98 %, three rounds
				for i := range x {
					s := math.Abs(x[i])
					if s == 0 {
						s = 1
					}
					x[i] += step * s * (2*rnd.Float64() - 1)
					if trial%8 == 7 && i%3 == 0 {
						x[i] = 0 // zeros: sqrt, log and division at their edges
					}
				}
				for i := range p {
					if trial%2 == 1 {
						p[i] *= 1 + 0.1*(2*rnd.Float64()-1)
					}
				}
				t.Run(fmt.Sprint("point", trial), func(t *testing.T) { compareBits(t, prog, e, ref, x, p) })
			}
		})
	}
}

// nestedOps builds an invented system in which every operation sits inside
// other arithmetic, so that the adjoint reaching it is not 1 and each
// partial derivative is multiplied, summed and shared as in a real model.
func nestedOps() *model.System {
	b := &builder{file: "nested.yaml", line: 1}
	x0, x1, x2 := b.x(0), b.x(1), b.x(2)
	p0 := b.p(0)
	s := b.add(b.mul(x0, x1), b.num(0.3)) // shared: x0*x1 + 0.3
	terms := []model.Node{
		b.mul(b.num(1.7), b.call(model.FnLog, s)),
		b.div(b.call(model.FnLog10, b.mul(s, x2)), x0),
		b.mul(x2, b.call(model.FnSqrt, b.add(s, x2))),
		b.mul(b.call(model.FnExp, b.div(x1, b.num(3))), s),
		b.pow(s, b.num(2)),
		b.mul(p0, b.pow(b.add(x0, x2), b.num(2.5))),
		b.pow(b.add(x1, b.num(0.5)), b.mul(x2, p0)),
		b.call(model.FnPow, s, b.sub(x0, b.num(0.2))),
		b.mul(b.num(0.9), b.call(model.FnAbs, b.sub(x0, x1))),
		b.neg(b.mul(b.call(model.FnMin, x0, b.mul(x1, x2), s), s)),
		b.div(b.call(model.FnMax, x2, b.sub(x1, x0), b.mul(p0, x1)), b.add(s, x1)),
		b.sub(b.div(s, b.add(x2, b.num(1))), b.mul(x0, b.mul(x0, x2))),
	}
	sys := &model.System{
		Name:     "nested",
		File:     "nested.yaml",
		Unknowns: unknowns("x0", "x1", "x2"),
		Params:   []model.Symbol{{Name: "p0", Role: model.RoleParameter, Value: 1.3}},
	}
	// Three equations summing the terms in different groupings, plus each
	// term alone as an output, so shared values cross tapes.
	sys.Equations = []model.Equation{
		{Name: "all", Residual: b.sum(terms...), Pos: b.pos()},
		{Name: "first half", Residual: b.mul(b.sum(terms[:6]...), x1), Pos: b.pos()},
		{Name: "second half", Residual: b.div(b.sum(terms[6:]...), s), Pos: b.pos()},
	}
	for i, t := range terms {
		sys.Outputs = append(sys.Outputs, model.Output{Name: fmt.Sprint("term", i), Expr: b.mul(t, x2), Pos: b.pos()})
	}
	return sys
}
