package jacobian

import (
	"fmt"
	"slices"

	"gonum.org/v1/gonum/mat"
)

// Eval evaluates a Program with its own work buffers. It is not safe for
// concurrent use; give each goroutine its own (Program.NewEval). Its methods
// do not allocate, and never modify x or p.
//
// Every method checks shapes: a slice or matrix of the wrong size is a
// programming error and panics. Values that are not finite are returned as an
// *EvalError naming the first formula that produced one; the destination is
// then only partly filled.
type Eval struct {
	prog   *Program
	w      []float64 // value space: x, p, the constants, the temporaries of a forward program
	d      []float64 // adjoints: zero, sink, one region per tape of a group
	vals   []float64 // values of the source form of a tape, gathered to describe an error
	adj    []float64 // adjoints of the source form, gathered to describe an error
	padj   []float64 // parameter adjoints, scattered by index, kept zero between uses
	xw, pw []float64 // perturbed copies of x and p for finite differences
	f1, f2 []float64 // residuals for finite differences

	// The equations' reverse steps leading to the parameters last asked
	// of ParamJacobian, built on first use (an Eval is one caller's).
	pjCols []int
	pjRev  revSweeps
}

// check checks the lengths of x and p and copies them into the value space.
func (e *Eval) check(x, p []float64) {
	nx, np := e.prog.nx, e.prog.np
	if len(x) != nx {
		panic(fmt.Sprintf("jacobian: len(x) = %d, want %d", len(x), nx))
	}
	if len(p) != np {
		panic(fmt.Sprintf("jacobian: len(p) = %d, want %d", len(p), np))
	}
	copy(e.w[:nx], x)
	copy(e.w[nx:nx+np], p)
}

func checkLen(what string, got, want int) {
	if got != want {
		panic(fmt.Sprintf("jacobian: len(%s) = %d, want %d", what, got, want))
	}
}

func checkDims(what string, m *mat.Dense, r, c int) {
	if mr, mc := m.Dims(); mr != r || mc != c {
		panic(fmt.Sprintf("jacobian: %s is %d×%d, want %d×%d", what, mr, mc, r, c))
	}
}

// value returns the value of t after the forward program of its group,
// checking it is finite.
func (e *Eval) value(t *tape) (float64, error) {
	r := e.w[t.out]
	if !finite(r) {
		return r, t.valueFault(gather(e.vals, e.w, t.slot, len(t.ops)))
	}
	return r, nil
}

// derivFault describes a derivative of t, one of tapes, that is not
// finite. It runs every step of the group's reverse sweeps first (the
// caller may have run only those it needed), so that the adjoints of the
// source form are all there to examine.
func (e *Eval) derivFault(tapes []*tape, rev *revSweeps, t *tape, wrt string) *EvalError {
	reverse(&rev.seeds, rev.all, e.d, e.w)
	return t.derivFault(gather(e.vals, e.w, t.slot, len(t.ops)), gather(e.adj, e.d, t.aslot, len(t.aslot)), wrt)
}

// values runs the forward program of a group and copies out the value of
// each of its tapes.
func (e *Eval) values(dst []float64, tapes []*tape, code *fwdProgram) error {
	forward(code, e.w, e.prog.base)
	for i, t := range tapes {
		r, err := e.value(t)
		if err != nil {
			return err
		}
		dst[i] = r
	}
	return nil
}

// Residual sets dst[i] = F_i(x, p), the residual of equation i (lhs - rhs).
func (e *Eval) Residual(dst, x, p []float64) error {
	e.check(x, p)
	checkLen("dst", len(dst), len(e.prog.eqs))
	return e.values(dst, e.prog.eqs, e.prog.eqFwd)
}

// Outputs sets dst[i] to the value of output i.
func (e *Eval) Outputs(dst, x, p []float64) error {
	e.check(x, p)
	checkLen("dst", len(dst), len(e.prog.outs))
	return e.values(dst, e.prog.outs, e.prog.outFwd)
}

// Defines sets dst[i] to the value of define i.
func (e *Eval) Defines(dst, x, p []float64) error {
	e.check(x, p)
	checkLen("dst", len(dst), len(e.prog.defs))
	return e.values(dst, e.prog.defs, e.prog.defFwd)
}

// Checks sets dst[i] to the value of the quantity of range check i
// (model.System.Checks), for comparing with its Min and Max after solving.
func (e *Eval) Checks(dst, x, p []float64) error {
	e.check(x, p)
	checkLen("dst", len(dst), len(e.prog.checks))
	return e.values(dst, e.prog.checks, e.prog.chkFwd)
}

// Jacobian fills dst.Val with dF/dx at (x, p), in the order of Pattern. dst
// must have the structure of Program.NewJacobian.
func (e *Eval) Jacobian(dst *Sparse, x, p []float64) error {
	return e.ResidualJacobian(nil, dst, x, p)
}

// ResidualJacobian computes the residual into f and dF/dx into dst.Val in one
// pass. f may be nil when only the Jacobian is wanted.
func (e *Eval) ResidualJacobian(f []float64, dst *Sparse, x, p []float64) error {
	e.check(x, p)
	if f != nil {
		checkLen("f", len(f), len(e.prog.eqs))
	}
	pat := e.prog.pattern
	if dst.Rows != pat.Rows || dst.Cols != pat.Cols || len(dst.Val) != len(pat.ColIdx) {
		panic("jacobian: destination does not have the Jacobian's pattern (use Program.NewJacobian)")
	}
	forward(e.prog.eqFwd, e.w, e.prog.base)
	rev := &e.prog.eqRev
	pre := rev.tan != nil
	if pre {
		forward(rev.tan, e.w, rev.tanBase)
		pre = allFinite(e.w[rev.tanBase : rev.tanBase+len(rev.tan.code)])
	}
	if pre {
		reverse(&rev.seeds, rev.xPre, e.d, e.w)
		retry, err := e.jacobianRows(f, dst, true)
		if !retry {
			return err
		}
	}
	// Nothing preaccumulated, or a tangent or a derivative that is not
	// finite: the full sweeps decide, and describe what is wrong.
	reverse(&rev.seeds, rev.x, e.d, e.w)
	_, err := e.jacobianRows(f, dst, false)
	return err
}

// jacobianRows copies the residuals into f (when not nil) and the
// derivatives of the last reverse sweeps into dst.Val, checking both. When
// a derivative is not finite it returns retry = true if pre (the sweeps
// stopped at preaccumulated values, and the full sweeps should be run
// instead), and an error describing it otherwise.
func (e *Eval) jacobianRows(f []float64, dst *Sparse, pre bool) (retry bool, err error) {
	// Everything finite (the common case): gather without looking further.
	prog := e.prog
	if gatherFinite(e.w, prog.eqOut) && gatherFinite(e.d, prog.eqAdj) {
		if f != nil {
			for i, k := range prog.eqOut {
				f[i] = e.w[k]
			}
		}
		for i, k := range prog.eqAdj {
			dst.Val[i] = e.d[k]
		}
		return false, nil
	}
	pat := prog.pattern
	for i, t := range e.prog.eqs {
		r, err := e.value(t)
		if err != nil {
			return false, err
		}
		if f != nil {
			f[i] = r
		}
		row := dst.Val[pat.RowPtr[i]:pat.RowPtr[i+1]]
		src := e.d[t.adj0 : int(t.adj0)+len(row)]
		if !allFinite(src) {
			if pre {
				return true, nil
			}
			k := 0
			for finite(src[k]) {
				k++
			}
			copy(row, src[:k])
			return false, e.derivFault(e.prog.eqs, &e.prog.eqRev, t, e.prog.xNames[t.vars[k].index])
		}
		copy(row, src)
	}
	return false, nil
}

// gatherFinite reports whether every z[k] for k in idx is finite, as
// allFinite does.
func gatherFinite(z []float64, idx []int32) bool {
	var s0, s1 float64
	for len(idx) >= 2 {
		s0 += z[idx[0]] - z[idx[0]]
		s1 += z[idx[1]] - z[idx[1]]
		idx = idx[2:]
	}
	for _, k := range idx {
		s0 += z[k] - z[k]
	}
	return s0+s1 == 0
}

// allFinite reports whether every element of v is finite: f-f is 0 for a
// finite f and NaN otherwise, and a sum with a NaN term is NaN. Four sums
// run side by side, without a branch per element.
func allFinite(v []float64) bool {
	var s0, s1, s2, s3 float64
	for len(v) >= 4 {
		s0 += v[0] - v[0]
		s1 += v[1] - v[1]
		s2 += v[2] - v[2]
		s3 += v[3] - v[3]
		v = v[4:]
	}
	for _, f := range v {
		s0 += f - f
	}
	return (s0+s1)+(s2+s3) == 0
}

// ParamJacobian sets column k of dst to dF/dp[cols[k]] at (x, p); dst has one
// row per equation and len(cols) columns.
//
// Only the reverse steps that lead to those parameters run: the first call
// with a set of columns prepares them (and allocates), later calls with the
// same columns reuse them.
func (e *Eval) ParamJacobian(dst *mat.Dense, x, p []float64, cols []int) error {
	e.check(x, p)
	checkDims("dst", dst, len(e.prog.eqs), len(cols))
	if e.pjCols == nil || !slices.Equal(cols, e.pjCols) {
		for _, c := range cols {
			if c < 0 || c >= e.prog.np {
				panic(fmt.Sprintf("jacobian: parameter column %d out of range [0, %d)", c, e.prog.np))
			}
		}
		rev := e.prog.eqRev
		rev.p = paramBatches(e.prog.eqs, rev.sweeps, cols, e.prog.np)
		e.pjCols, e.pjRev = slices.Clone(cols), rev
	}
	return e.gradRows(nil, dst, e.prog.eqs, e.prog.eqFwd, &e.pjRev, cols)
}

// OutputGradients sets dx to dy/dx (one row per output, one column per
// unknown) and, when dp is not nil, column k of dp to dy/dp[cols[k]].
func (e *Eval) OutputGradients(dx, dp *mat.Dense, x, p []float64, cols []int) error {
	e.check(x, p)
	nout := len(e.prog.outs)
	checkDims("dx", dx, nout, e.prog.nx)
	if dp != nil {
		checkDims("dp", dp, nout, len(cols))
	}
	return e.gradRows(dx, dp, e.prog.outs, e.prog.outFwd, &e.prog.outRev, cols)
}

// gradRows sets dx[i][j] = d tapes[i] / d x[j] when dx is not nil, and
// dp[i][k] = d tapes[i] / d p[cols[k]] when dp is not nil.
func (e *Eval) gradRows(dx, dp *mat.Dense, tapes []*tape, code *fwdProgram, rev *revSweeps, cols []int) error {
	if dp != nil {
		for _, c := range cols {
			if c < 0 || c >= e.prog.np {
				panic(fmt.Sprintf("jacobian: parameter column %d out of range [0, %d)", c, e.prog.np))
			}
		}
	}
	forward(code, e.w, e.prog.base)
	steps := rev.all
	switch {
	case dp == nil:
		steps = rev.x
	case dx == nil:
		steps = rev.p
	}
	reverse(&rev.seeds, steps, e.d, e.w)
	for i, t := range tapes {
		if _, err := e.value(t); err != nil {
			return err
		}
		if dx != nil {
			row := dx.RawRowView(i)
			clear(row)
			for k, vr := range t.vars {
				d := e.d[int(t.adj0)+k]
				if !finite(d) {
					return e.derivFault(tapes, rev, t, e.prog.xNames[vr.index])
				}
				row[vr.index] = d
			}
		}
		if dp != nil {
			for k, vr := range t.params {
				e.padj[vr.index] = e.d[int(t.adj0)+len(t.vars)+k]
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
				return e.derivFault(tapes, rev, t, e.prog.pNames[bad])
			}
		}
	}
	return nil
}
