package jacobian

import (
	"fmt"
	"math"
	"slices"
	"unsafe"

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
	nx, np int       // the program's, read on every call
	w      []float64 // value space: x, p, the constants, the temporaries of a forward program
	d      []float64 // adjoints: zero, sink, one region per tape of a group
	vals   []float64 // values of the source form of a tape, gathered to describe an error
	adj    []float64 // adjoints of the source form, gathered to describe an error
	padj   []float64 // parameter adjoints, scattered by index, kept zero between uses
	xw, pw []float64 // perturbed copies of x and p for finite differences
	f1, f2 []float64 // residuals for finite differences

	// cur is the id of the forward program whose values w holds for the
	// x and p in w (0 when none does): a group's values are computed once
	// for a point, however many of its methods are called there. An int,
	// not a pointer, so that setting it costs no write barrier.
	cur int

	// The equations' reverse steps leading to the parameters last asked
	// of ParamJacobian, and the plans of the last ParamJacobian and
	// OutputGradients, built on first use (an Eval is one caller's).
	pjRev revSweeps
	pj    gradPlan
	og    gradPlan
}

// check checks the lengths of x and p and copies them into the value space.
// When they are those already there, to the bit, the values of the forward
// program last run are kept.
func (e *Eval) check(x, p []float64) {
	nx := e.nx
	if len(x) != nx || len(p) != e.np {
		panic(e.lengthsMessage(len(x), len(p)))
	}
	w := e.w[:nx+len(p)]
	if setBits(w[:nx], x)|setBits(w[nx:], p) != 0 {
		e.cur = 0
	}
}

func (e *Eval) lengthsMessage(nx, np int) string {
	if nx != e.nx {
		return fmt.Sprintf("jacobian: len(x) = %d, want %d", nx, e.nx)
	}
	return fmt.Sprintf("jacobian: len(p) = %d, want %d", np, e.np)
}

// setBits copies src into dst (at least as long) and returns a number
// that is 0 when no element changed, to the bit (so -0 differs from 0, and
// a NaN equals only the same NaN). One pass, without a branch per element
// (every element is written; the unchanged ones with the same bits).
func setBits(dst, src []float64) uint64 {
	dst = dst[:len(src)]
	var diff uint64
	for i, v := range src {
		diff |= math.Float64bits(v) ^ math.Float64bits(dst[i])
		dst[i] = v
	}
	return diff
}

// run makes w hold the values of the forward program f at the x and p in
// w, running it unless it was the last run there.
func (e *Eval) run(f *fwdProgram) {
	if e.cur != f.id {
		forward(f, e.w, e.prog.base)
		e.cur = f.id
	}
}

// checkLen panics unless got == want; the message is built out of line,
// so that the check itself is inlined.
func checkLen(what string, got, want int) {
	if got != want {
		panic(lenMessage(what, got, want))
	}
}

func lenMessage(what string, got, want int) string {
	return fmt.Sprintf("jacobian: len(%s) = %d, want %d", what, got, want)
}

// checkDims panics unless m is r×c, as checkLen.
func checkDims(what string, m *mat.Dense, r, c int) {
	if mr, mc := m.Dims(); mr != r || mc != c {
		panic(dimsMessage(what, mr, mc, r, c))
	}
}

func dimsMessage(what string, mr, mc, r, c int) string {
	return fmt.Sprintf("jacobian: %s is %d×%d, want %d×%d", what, mr, mc, r, c)
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
	reverse(&rev.seeds, &rev.all, e.d, e.w)
	return t.derivFault(gather(e.vals, e.w, t.slot, len(t.ops)), gather(e.adj, e.d, t.aslot, len(t.aslot)), wrt)
}

// values runs the forward program of a group and copies out the value of
// each of its tapes, whose results are at out in w.
func (e *Eval) values(dst []float64, tapes []*tape, code *fwdProgram, out []int32) error {
	e.run(code)
	if gatherFinite(e.w, out) {
		gatherTo(dst, e.w, out)
		return nil
	}
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
	return e.values(dst, e.prog.eqs, e.prog.eqFwd, e.prog.eqOut)
}

// Outputs sets dst[i] to the value of output i.
func (e *Eval) Outputs(dst, x, p []float64) error {
	e.check(x, p)
	checkLen("dst", len(dst), len(e.prog.outs))
	return e.values(dst, e.prog.outs, e.prog.outFwd, e.prog.outOut)
}

// Defines sets dst[i] to the value of define i.
func (e *Eval) Defines(dst, x, p []float64) error {
	e.check(x, p)
	checkLen("dst", len(dst), len(e.prog.defs))
	return e.values(dst, e.prog.defs, e.prog.defFwd, e.prog.defOut)
}

// Checks sets dst[i] to the value of the quantity of range check i
// (model.System.Checks), for comparing with its Min and Max after solving.
func (e *Eval) Checks(dst, x, p []float64) error {
	e.check(x, p)
	checkLen("dst", len(dst), len(e.prog.checks))
	return e.values(dst, e.prog.checks, e.prog.chkFwd, e.prog.chkOut)
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
	e.run(e.prog.eqFwd)
	rev := &e.prog.eqRev
	pre := rev.tan != nil
	if pre {
		forward(rev.tan, e.w, rev.tanBase)
		pre = allFinite(e.w[rev.tanBase : rev.tanBase+len(rev.tan.code)])
	}
	if pre {
		reverse(&rev.seeds, &rev.xPre, e.d, e.w)
		retry, err := e.jacobianRows(f, dst, true)
		if !retry {
			return err
		}
	}
	// Nothing preaccumulated, or a tangent or a derivative that is not
	// finite: the full sweeps decide, and describe what is wrong.
	reverse(&rev.seeds, &rev.x, e.d, e.w)
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
	if !pre {
		// The values checked first; the derivatives checked as they are
		// gathered, in the order of dst.Val, which is that of the rows:
		// when one is not finite, the entries before it hold what the
		// row-by-row loop below writes there again, and those after it
		// are untouched, as that loop leaves them.
		if gatherFinite(e.w, prog.eqOut) && gatherFiniteTo(dst.Val, e.d, prog.eqAdj) {
			if f != nil {
				gatherTo(f, e.w, prog.eqOut)
			}
			return false, nil
		}
	} else if gatherFinite(e.w, prog.eqOut) && gatherFinite(e.d, prog.eqAdj) {
		if f != nil {
			gatherTo(f, e.w, prog.eqOut)
		}
		gatherTo(dst.Val, e.d, prog.eqAdj)
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
// allFinite does. Every index is below len(z): idx is one of the program's
// lists of results (z = w) or of derivatives (z = d), or a plan's, all
// checked against the lengths of w and d when built, so z is read without
// further checks.
func gatherFinite(z []float64, idx []int32) bool {
	zp := unsafe.Pointer(unsafe.SliceData(z))
	var s0, s1 float64
	i := 0
	for ; i+1 < len(idx); i += 2 {
		a, b := *at(zp, idx[i]), *at(zp, idx[i+1])
		s0 += a - a
		s1 += b - b
	}
	if i < len(idx) {
		a := *at(zp, idx[i])
		s0 += a - a
	}
	return s0+s1 == 0
}

// gatherTo sets dst[i] = z[idx[i]], z indexed as in gatherFinite.
func gatherTo(dst []float64, z []float64, idx []int32) {
	zp := unsafe.Pointer(unsafe.SliceData(z))
	dst = dst[:len(idx)]
	for i, k := range idx {
		dst[i] = *at(zp, k)
	}
}

// gatherFiniteTo sets dst[i] = z[idx[i]] (z indexed as in gatherFinite)
// as long as that is finite. It reports whether every one was: when not,
// dst[i] is set only before the first that is not.
func gatherFiniteTo(dst []float64, z []float64, idx []int32) bool {
	zp := unsafe.Pointer(unsafe.SliceData(z))
	dst = dst[:len(idx)]
	for i, k := range idx {
		v := *at(zp, k)
		if v-v != 0 {
			return false
		}
		dst[i] = v
	}
	return true
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
	if !e.pj.fits(cols, false, true) {
		e.checkCols(cols)
		rev := e.prog.eqRev
		rev.p = flatten(paramBatches(e.prog.eqs, rev.sweeps, cols, e.prog.np))
		e.pjRev = rev
		e.pj = e.newPlan(e.prog.eqs, &e.pjRev.p, cols, false, true)
	}
	return e.grad(nil, dst, e.prog.eqs, e.prog.eqFwd, e.prog.eqOut, &e.pjRev, &e.pj)
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
	if !e.og.fits(cols, true, dp != nil) {
		if dp != nil {
			e.checkCols(cols)
		}
		rev := &e.prog.outRev.all
		if dp == nil {
			rev = &e.prog.outRev.x
		}
		e.og = e.newPlan(e.prog.outs, rev, cols, true, dp != nil)
	}
	return e.grad(dx, dp, e.prog.outs, e.prog.outFwd, e.prog.outOut, &e.prog.outRev, &e.og)
}

func (e *Eval) checkCols(cols []int) {
	for _, c := range cols {
		if c < 0 || c >= e.prog.np {
			panic(fmt.Sprintf("jacobian: parameter column %d out of range [0, %d)", c, e.prog.np))
		}
	}
}

// gradPlan is what grad needs for the rows of a group of tapes and one set
// of parameter columns, prepared on the first call with them: the reverse
// steps to run, and where in d each entry of the rows is found.
//
// A tape whose reverse sweep has no steps (its result is an unknown, a
// parameter or a constant, as outputs often are) has derivatives that are
// constants: after the seeds, the adjoint of its result holds 1 and those
// of the other symbols it loads 0. The plan reads them from the one and
// zero slots of d instead, and when every entry is read there it runs no
// reverse steps and checks no derivative (a copy of the value and a unit
// row, to the bit what the sweep would give).
type gradPlan struct {
	ok           bool
	wantX, wantP bool  // rows of dx, of dp
	cols         []int // the parameter columns, when wantP
	rev          *revCode
	needRev      bool // some entry is read from a region of d, or rev has steps
	// The rows of dx: element (i, j) of dx, an r×c matrix, is
	// d[xIdx[i*c+j]] when xIdx is not nil (small or dense rows);
	// otherwise entry k of the rows is (xRow[k], xCol[k]), found at
	// xSrc[k] in d: the unknowns each tape loads (the other entries are
	// 0). pIdx[i*len(cols)+k] is the index in d of d tape i / d p[cols[k]]:
	// the adjoint in the tape's region, or the zero slot when the tape does
	// not load it.
	xIdx             []int32
	xRow, xCol, xSrc []int32
	pIdx             []int32
	dIdx             []int32 // the entries read from the regions of d, checked finite
}

// fits reports whether the plan serves a call with these columns and
// destinations.
func (pl *gradPlan) fits(cols []int, wantX, wantP bool) bool {
	return pl.ok && pl.wantX == wantX && pl.wantP == wantP && (!wantP || slices.Equal(cols, pl.cols))
}

// newPlan prepares the plan of the rows of tapes, whose reverse steps are
// rev, for cols (checked by the caller).
func (e *Eval) newPlan(tapes []*tape, rev *revCode, cols []int, wantX, wantP bool) gradPlan {
	pl := gradPlan{ok: true, wantX: wantX, wantP: wantP, rev: rev}
	// where is the index in d the plan reads for the derivative of t
	// found at a after the reverse sweep.
	where := func(t *tape, a int32) int32 {
		switch {
		case t.nsteps > 0 || a == dZero:
			return a
		case a == t.rootAdj:
			return dOne
		}
		return dZero
	}
	if wantX {
		for i, t := range tapes {
			for k, vr := range t.vars {
				pl.xRow = append(pl.xRow, int32(i))
				pl.xCol = append(pl.xCol, vr.index)
				pl.xSrc = append(pl.xSrc, where(t, t.adj0+int32(k)))
			}
		}
		// A dense index when the rows are small or mostly filled: one
		// gather instead of clearing and scattering.
		if n := len(tapes) * e.nx; n <= 16 || n <= 4*len(pl.xSrc) {
			pl.xIdx = make([]int32, n)
			for k, i := range pl.xRow {
				pl.xIdx[int(i)*e.nx+int(pl.xCol[k])] = pl.xSrc[k]
			}
		}
	}
	if wantP {
		pl.cols = slices.Clone(cols)
		pl.pIdx = make([]int32, len(tapes)*len(cols))
		adj := make([]int32, e.np)
		for i, t := range tapes {
			for k, vr := range t.params {
				adj[vr.index] = where(t, t.adj0+int32(len(t.vars)+k))
			}
			for k, c := range cols {
				pl.pIdx[i*len(cols)+k] = adj[c]
			}
			for _, vr := range t.params {
				adj[vr.index] = dZero
			}
		}
	}
	for _, a := range slices.Concat(pl.xSrc, pl.pIdx) {
		if a < 0 || int(a) >= len(e.d) {
			panic("jacobian: derivative index outside the adjoints")
		}
		if a != dZero && a != dOne {
			pl.dIdx = append(pl.dIdx, a)
		}
	}
	pl.needRev = len(pl.dIdx) > 0 || len(rev.runs) > 0
	return pl
}

// grad sets the rows of dx and dp (either may be nil) as gradRows does,
// by the plan pl: it runs the group's forward program (unless w holds its
// values already) and the plan's reverse steps (when it needs them) and,
// when every value and every derivative asked for is finite (the common
// case), copies the derivatives from d. Otherwise gradRows runs instead, on
// the same numbers, to fill the destinations as far as it goes and
// describe what is not finite.
func (e *Eval) grad(dx, dp *mat.Dense, tapes []*tape, code *fwdProgram, out []int32, rev *revSweeps, pl *gradPlan) error {
	e.run(code)
	if pl.needRev {
		reverse(&rev.seeds, pl.rev, e.d, e.w)
	}
	if !gatherFinite(e.w, out) {
		return e.gradRows(dx, dp, tapes, code, rev, pl.rev, pl.cols)
	}
	if dx == nil {
		// dp alone, its rows end to end: its derivatives checked as they
		// are gathered, in the order gradRows writes them. When one is not
		// finite, the entries before it hold what gradRows writes there
		// again (it recomputes the same numbers), those after it are
		// untouched until gradRows fills the rest of that row, as it
		// would have done alone.
		if m := dp.RawMatrix(); m.Stride == m.Cols {
			if !gatherFiniteTo(m.Data, e.d, pl.pIdx) {
				return e.gradRows(dx, dp, tapes, code, rev, pl.rev, pl.cols)
			}
			return nil
		}
	}
	if !gatherFinite(e.d, pl.dIdx) {
		return e.gradRows(dx, dp, tapes, code, rev, pl.rev, pl.cols)
	}
	if dx != nil {
		if pl.xIdx != nil {
			gatherRows(dx, e.d, pl.xIdx)
		} else {
			scatterRows(dx, e.d, pl.xRow, pl.xCol, pl.xSrc)
		}
	}
	if dp != nil {
		gatherRows(dp, e.d, pl.pIdx)
	}
	return nil
}

// scatterRows clears dst and sets element (row[k], col[k]) of it to
// z[src[k]], z indexed as in gatherFinite.
func scatterRows(dst *mat.Dense, z []float64, row, col, src []int32) {
	m := dst.RawMatrix()
	if m.Stride == m.Cols {
		clear(m.Data[:m.Rows*m.Cols])
	} else {
		for i := range m.Rows {
			clear(m.Data[i*m.Stride : i*m.Stride+m.Cols])
		}
	}
	zp := unsafe.Pointer(unsafe.SliceData(z))
	col, src = col[:len(row)], src[:len(row)]
	for k, i := range row {
		m.Data[int(i)*m.Stride+int(col[k])] = *at(zp, src[k])
	}
}

// gatherRows sets element (i, j) of dst, an r×c matrix, to z[idx[i*c+j]].
func gatherRows(dst *mat.Dense, z []float64, idx []int32) {
	m := dst.RawMatrix()
	if m.Stride == m.Cols { // rows stored end to end
		gatherTo(m.Data, z, idx)
		return
	}
	for i := range m.Rows {
		row := m.Data[i*m.Stride : i*m.Stride+m.Cols]
		ix := idx[i*m.Cols : (i+1)*m.Cols]
		for j := range row {
			row[j] = z[ix[j]]
		}
	}
}

// gradRows sets dx[i][j] = d tapes[i] / d x[j] when dx is not nil, and
// dp[i][k] = d tapes[i] / d p[cols[k]] when dp is not nil, running the
// reverse steps steps of the group's sweeps rev. It is the general form of
// grad, which describes a value or a derivative that is not finite.
func (e *Eval) gradRows(dx, dp *mat.Dense, tapes []*tape, code *fwdProgram, rev *revSweeps, steps *revCode, cols []int) error {
	if dp != nil {
		for _, c := range cols {
			if c < 0 || c >= e.prog.np {
				panic(fmt.Sprintf("jacobian: parameter column %d out of range [0, %d)", c, e.prog.np))
			}
		}
	}
	forward(code, e.w, e.prog.base)
	e.cur = code.id
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
