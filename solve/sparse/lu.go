package sparse

import (
	"errors"
	"math"
	"slices"
)

// Options tunes a factorisation. A nil *Options or a zero field means the
// default.
type Options struct {
	// Tau is the pivot threshold: a pivot is acceptable when its magnitude
	// is at least Tau times the largest candidate in its column. Zero means
	// 0.1. Tau = 1 is classical partial pivoting. Band mode (see the
	// package documentation) always pivots partially, which satisfies any
	// Tau.
	Tau float64
	// Order is the column ordering; the zero value is RCM.
	Order Ordering

	// sparseOnly keeps the factorisation in sparse mode whatever the
	// band (for tests and benchmarks of the sparse mode).
	sparseOnly bool
}

func (o *Options) tau() float64 {
	if o == nil || o.Tau <= 0 {
		return 0.1
	}
	return min(o.Tau, 1)
}

// LU is a sparse factorisation P A Q = L U of a square matrix, with L unit
// lower triangular. Once factored, the solve methods only read it and may be
// called from several goroutines; Refactor writes it. A matrix that is a
// narrow band once ordered is factored in band storage instead, without a
// difference to the caller (see the package documentation).
type LU struct {
	n   int
	tau float64
	how Ordering

	// Symbolic part, fixed for a pattern.
	rowPtr, colIdx []int // copy of the pattern, to recognise it again
	cp, ri         []int // CSC pattern of A
	csrPos         []int // csrPos[k] = position in A.Val of CSC entry k
	cval           []float64
	q, pref        []int // column order, preferred pivot row per column

	// Pivots and factors.
	pinv, p    []int // row -> position, position -> row
	lp, li     []int // L by columns (strictly lower), rows as positions
	lx         []float64
	up, ui     []int // U by columns (strictly upper), in elimination order
	ux         []float64
	udiag      []float64
	anorm      float64
	rpos       []int     // rpos[k] = pivot position of the row of CSC entry k
	work       []float64 // scratch of refactor
	refactored int       // numeric refactorisations that kept the pivots
	fresh      int       // factorisations that chose pivots

	// The order-2 path (small.go): the places of the few entries, set
	// with the pivots when n = 2.
	two plan2

	// Band mode (band.go): when banded, bd holds the factors and the
	// sparse symbolic and numeric fields above are unused.
	banded bool
	noBand bool // Options.sparseOnly
	bd     bandLU
}

var errPivot = errors.New("sparse: kept pivot failed the threshold")

// Factorize analyses the pattern of the square matrix a and factors it. It
// returns a *SingularError when a column has no acceptable pivot; the LU is
// returned all the same, analysed and ready for Refactor with other values
// (but not for solving). a is not modified or retained. A non-square or malformed matrix panics.
func Factorize(a *CSR, opts *Options) (*LU, error) {
	a.check()
	if a.Rows != a.Cols {
		panic("sparse: Factorize: matrix is not square")
	}
	f := &LU{n: a.Rows, tau: opts.tau()}
	if opts != nil {
		f.how = opts.Order
		f.noBand = opts.sparseOnly
	}
	f.analyze(a)
	if f.banded {
		return f, f.bandFactor(a.Val)
	}
	f.gather(a)
	return f, f.factor()
}

// Refactor factors a new matrix. When a has the pattern the factorisation
// was analysed for, the column order is kept and the previous pivot sequence
// is tried first (no graph search, no pivot choice); if a kept pivot fails
// the threshold the matrix is factored afresh with new pivots. A different
// pattern is analysed from scratch. After an error the LU must not be used
// for solving.
func (f *LU) Refactor(a *CSR) error {
	a.check()
	if a.Rows != a.Cols {
		panic("sparse: Refactor: matrix is not square")
	}
	if a.Rows != f.n || !slices.Equal(a.RowPtr, f.rowPtr) || !slices.Equal(a.ColIdx[:a.RowPtr[a.Rows]], f.colIdx) {
		f.n = a.Rows
		f.analyze(a)
		if f.banded {
			return f.bandFactor(a.Val)
		}
		f.gather(a)
		return f.factor()
	}
	return f.refactorValues(a.Val)
}

// CopyFrom makes f a copy of src (pattern, column order, pivots and
// factors), reusing f's storage: the next Refactor of f then starts from
// src's pivots. A nil src leaves f empty, to be analysed afresh by its
// next Refactor.
func (f *LU) CopyFrom(src *LU) {
	if src == nil {
		*f = LU{}
		return
	}
	cpInts := func(dst, s []int) []int {
		if s == nil {
			return nil
		}
		return append(dst[:0], s...)
	}
	cpFloats := func(dst, s []float64) []float64 {
		if s == nil {
			return nil
		}
		return append(dst[:0], s...)
	}
	f.n, f.tau, f.how, f.noBand = src.n, src.tau, src.how, src.noBand
	f.rowPtr, f.colIdx = cpInts(f.rowPtr, src.rowPtr), cpInts(f.colIdx, src.colIdx)
	f.cp, f.ri, f.csrPos = cpInts(f.cp, src.cp), cpInts(f.ri, src.ri), cpInts(f.csrPos, src.csrPos)
	f.cval = cpFloats(f.cval, src.cval)
	f.q, f.pref = cpInts(f.q, src.q), cpInts(f.pref, src.pref)
	f.pinv, f.p = cpInts(f.pinv, src.pinv), cpInts(f.p, src.p)
	f.lp, f.li, f.lx = cpInts(f.lp, src.lp), cpInts(f.li, src.li), cpFloats(f.lx, src.lx)
	f.up, f.ui, f.ux = cpInts(f.up, src.up), cpInts(f.ui, src.ui), cpFloats(f.ux, src.ux)
	f.udiag = cpFloats(f.udiag, src.udiag)
	f.rpos = cpInts(f.rpos, src.rpos)
	f.anorm = src.anorm
	f.refactored, f.fresh = 0, 0
	f.banded = src.banded
	f.two = src.two
	if src.banded {
		f.bd.copyFrom(&src.bd)
	} else {
		f.bd.ok = false
	}
}

// RefactorValues is Refactor for a matrix with the pattern f was last
// analysed for, given by its values alone (in the order of that pattern's
// CSR entries): it skips checking and comparing the pattern, which costs
// as much as the refactorisation on small matrices.
func (f *LU) RefactorValues(val []float64) error {
	if f.rowPtr == nil || len(val) < len(f.colIdx) {
		panic("sparse: RefactorValues: no pattern analysed, or too few values")
	}
	// Order 2 with kept pivots (f.two.ok holds only then, in sparse mode):
	// refactor2 without the dispatch of refactorValues.
	if f.two.ok {
		if f.refactor2(val) == nil {
			f.refactored++
			return nil
		}
		return f.factorValues(val)
	}
	return f.refactorValues(val)
}

// refactorValues refactors with the kept pivots when there are some and
// they pass, reading the values straight from the CSR values val; else it
// gathers them and factors afresh.
func (f *LU) refactorValues(val []float64) error {
	if f.banded {
		return f.bandFactor(val)
	}
	if f.p != nil && len(f.rpos) == len(f.ri) {
		var err error
		if f.n == 2 {
			err = f.refactor2(val)
		} else {
			err = f.refactor(val)
		}
		if err == nil {
			f.refactored++
			return nil
		}
	}
	return f.factorValues(val)
}

// factorValues gathers the CSR values val and factors them afresh, with new
// pivots.
func (f *LU) factorValues(val []float64) error {
	f.gather(&CSR{Rows: f.n, Cols: f.n, RowPtr: f.rowPtr, ColIdx: f.colIdx, Val: val})
	return f.factor()
}

// Stats reports the number of entries in L and U (diagonal included in U),
// and how many factorisations chose new pivots (fresh) or kept the previous
// ones (kept). In band mode the entries are those of the stored band (L's
// multipliers, U's kl+ku superdiagonals and diagonal, zeros included) and
// every factorisation is fresh.
func (f *LU) Stats() (nnzL, nnzU, fresh, kept int) {
	if f.banded {
		nnzL, nnzU = f.bandStats()
		return nnzL, nnzU, f.fresh, f.refactored
	}
	return len(f.li), len(f.ui) + f.n, f.fresh, f.refactored
}

// analyze finds the column order, decides between band and sparse mode
// and, for the sparse mode, builds the CSC copy of the pattern.
func (f *LU) analyze(a *CSR) {
	n := a.Rows
	nnz := a.RowPtr[n]
	f.rowPtr = slices.Clone(a.RowPtr)
	f.colIdx = slices.Clone(a.ColIdx[:nnz])
	f.q, f.pref = order(a, f.how)
	f.two.ok = false
	f.p = nil
	if f.chooseBand(a) {
		f.cp, f.ri, f.csrPos, f.cval, f.rpos = nil, nil, nil, nil, nil
		f.lp, f.li, f.lx, f.up, f.ui, f.ux, f.udiag = nil, nil, nil, nil, nil, nil, nil
		return
	}
	f.cp = make([]int, n+1)
	for _, j := range f.colIdx {
		f.cp[j+1]++
	}
	for j := range n {
		f.cp[j+1] += f.cp[j]
	}
	next := slices.Clone(f.cp[:n])
	f.ri = make([]int, nnz)
	f.csrPos = make([]int, nnz)
	for i := range n {
		for p := a.RowPtr[i]; p < a.RowPtr[i+1]; p++ {
			k := next[a.ColIdx[p]]
			next[a.ColIdx[p]]++
			f.ri[k] = i
			f.csrPos[k] = p
		}
	}
	f.cval = make([]float64, nnz)
}

// gather copies the values of a into the CSC order and computes ||A||₁.
func (f *LU) gather(a *CSR) {
	for k, p := range f.csrPos {
		f.cval[k] = a.Val[p]
	}
	f.anorm = 0
	for j := range f.n {
		s := 0.0
		for _, v := range f.cval[f.cp[j]:f.cp[j+1]] {
			s += math.Abs(v)
		}
		if s > f.anorm || math.IsNaN(s) {
			f.anorm = s
		}
	}
}

// tiny is the size below which a pivot counts as zero, relative to the
// largest magnitude met while forming its column.
const tiny = 64 * 0x1p-52

// factor is the left-looking LU of Gilbert and Peierls: for each column in
// the chosen order, a depth-first search over the graph of L finds the
// pattern of the sparse triangular solve x = L \ A(:,col) in topological
// order; the solve fills x; the part in pivotal rows is U's column, the rest
// holds the pivot candidates and, divided by the pivot, L's column.
func (f *LU) factor() error {
	err := f.eliminate()
	if err != nil {
		f.p = nil // no pivots to keep, nothing to solve with
	}
	return err
}

func (f *LU) eliminate() error {
	f.fresh++
	f.two.ok = false
	n := f.n
	f.pinv = filled(n, -1)
	f.p = make([]int, n)
	f.lp = append(f.lp[:0], 0)
	f.up = append(f.up[:0], 0)
	f.li, f.lx, f.ui, f.ux = f.li[:0], f.lx[:0], f.ui[:0], f.ux[:0]
	f.udiag = make([]float64, n)

	x := make([]float64, n)
	xi := make([]int, n)
	mark := make([]int, n)
	stack := make([]int, n)
	pstack := make([]int, n)
	for k := range n {
		col := f.q[k]
		stamp := k + 1
		// Reach: depth-first search from each entry of A(:,col).
		top := n
		for _, r := range f.ri[f.cp[col]:f.cp[col+1]] {
			if mark[r] == stamp {
				continue
			}
			head := 0
			stack[0] = r
			for head >= 0 {
				j := stack[head]
				kj := f.pinv[j]
				if mark[j] != stamp {
					mark[j] = stamp
					if kj >= 0 {
						pstack[head] = f.lp[kj]
					}
				}
				done := true
				if kj >= 0 {
					end := f.lp[kj+1]
					for pp := pstack[head]; pp < end; pp++ {
						i := f.li[pp]
						if mark[i] == stamp {
							continue
						}
						pstack[head] = pp + 1
						head++
						stack[head] = i
						done = false
						break
					}
				}
				if done {
					head--
					top--
					xi[top] = j
				}
			}
		}
		// Numeric: sparse triangular solve.
		for _, j := range xi[top:] {
			x[j] = 0
		}
		scale := 0.0
		for pc := f.cp[col]; pc < f.cp[col+1]; pc++ {
			x[f.ri[pc]] = f.cval[pc]
			scale = max(scale, math.Abs(f.cval[pc]))
		}
		for _, j := range xi[top:] {
			kj := f.pinv[j]
			if kj < 0 {
				continue
			}
			xj := x[j]
			for pp := f.lp[kj]; pp < f.lp[kj+1]; pp++ {
				x[f.li[pp]] -= f.lx[pp] * xj
			}
		}
		// U's column and the pivot candidates.
		ipiv, amax, cands := -1, 0.0, 0
		for _, j := range xi[top:] {
			if kj := f.pinv[j]; kj >= 0 {
				f.ui = append(f.ui, kj)
				f.ux = append(f.ux, x[j])
				scale = max(scale, math.Abs(x[j]))
				continue
			}
			cands++
			if v := math.Abs(x[j]); v > amax || (ipiv < 0 && math.IsNaN(v)) {
				ipiv, amax = j, v
			}
		}
		if cands == 0 {
			return &SingularError{Col: col, Row: -1, Structural: true}
		}
		if ipiv < 0 {
			// Every candidate is exactly zero: numerically singular.
			return &SingularError{Col: col, Row: -1}
		}
		if r := f.pref[col]; r >= 0 && f.pinv[r] < 0 && mark[r] == stamp && math.Abs(x[r]) >= f.tau*amax {
			ipiv = r
		}
		pivot := x[ipiv]
		if !(math.Abs(pivot) > tiny*max(scale, amax)) || math.IsInf(pivot, 0) {
			return &SingularError{Col: col, Row: ipiv}
		}
		f.udiag[k] = pivot
		f.pinv[ipiv] = k
		f.p[k] = ipiv
		for _, j := range xi[top:] {
			if f.pinv[j] < 0 {
				f.li = append(f.li, j)
				f.lx = append(f.lx, x[j]/pivot)
			}
		}
		f.lp = append(f.lp, len(f.li))
		f.up = append(f.up, len(f.ui))
	}
	for pp, r := range f.li {
		f.li[pp] = f.pinv[r]
	}
	f.rpos = f.rpos[:0]
	for _, r := range f.ri {
		f.rpos = append(f.rpos, f.pinv[r])
	}
	if n == 2 {
		f.plan2()
	}
	return nil
}

// refactor repeats the elimination with the pivots and patterns of the last
// factorisation, working in pivot positions. It fails when a kept pivot is
// no longer acceptable.
func (f *LU) refactor(val []float64) error {
	n := f.n
	if len(f.work) != n {
		f.work = make([]float64, n)
	}
	x := f.work
	// One pass of column k; the index slices are resliced to their exact
	// lengths so that the compiler drops most bounds checks. The values are
	// gathered into cval on the way (for a fresh factorisation, should a
	// pivot fail) and ||A||₁ taken as gather takes it.
	ui, li, ux, lx := f.ui, f.li, f.ux, f.lx
	cp, csrPos, rpos, cval := f.cp, f.csrPos, f.rpos, f.cval
	anorm := 0.0
	for k := range n {
		col := f.q[k]
		u0, u1, l0, l1 := f.up[k], f.up[k+1], f.lp[k], f.lp[k+1]
		uRows, lRows := ui[u0:u1], li[l0:l1]
		for _, j := range uRows {
			x[j] = 0
		}
		for _, j := range lRows {
			x[j] = 0
		}
		x[k] = 0
		scale, sum := 0.0, 0.0
		c0, c1 := cp[col], cp[col+1]
		for pc, src := range csrPos[c0:c1] {
			v := val[src]
			cval[c0+pc] = v
			x[rpos[c0+pc]] = v
			scale = maxAbs(scale, v)
			sum += math.Abs(v)
		}
		if sum > anorm || math.IsNaN(sum) {
			anorm = sum
		}
		uk := ux[u0:u1]
		for t, j := range uRows {
			xj := x[j]
			uk[t] = xj
			scale = maxAbs(scale, xj)
			lj, vj := li[f.lp[j]:f.lp[j+1]], lx[f.lp[j]:f.lp[j+1]]
			for pp, r := range lj {
				x[r] -= vj[pp] * xj
			}
		}
		pivot := x[k]
		ap := math.Abs(pivot)
		amax := ap
		for _, j := range lRows {
			amax = maxAbs(amax, x[j])
		}
		if !(ap >= f.tau*amax) || !(ap > tiny*maxAbs(scale, amax)) || ap > math.MaxFloat64 {
			return errPivot
		}
		f.udiag[k] = pivot
		lk := lx[l0:l1]
		for t, j := range lRows {
			lk[t] = x[j] / pivot
		}
	}
	f.anorm = anorm
	return nil
}

// maxAbs is max(m, |v|) for m >= 0 or NaN, NaN when either is, as the
// built-in max gives it, without its call.
func maxAbs(m, v float64) float64 {
	if a := math.Abs(v); a > m || a != a {
		return a
	}
	return m
}

// Solve sets dst to the solution x of A x = b. dst and b may be the same
// slice. Lengths other than the order of A panic.
func (f *LU) Solve(dst, b []float64) {
	f.solve(dst, b, make([]float64, f.n), false)
}

// SolveWith is Solve with the caller's work space w (length n), so that it
// does not allocate.
func (f *LU) SolveWith(w, dst, b []float64) {
	if len(w) != f.n {
		panic("sparse: SolveWith: work space of the wrong length")
	}
	// Order 2 (f.two.ok holds only for a factorisation in sparse mode with
	// its pivots): solve2 without the dispatch of solve.
	if f.two.ok && len(dst) == 2 && len(b) == 2 {
		f.solve2(dst, b)
		return
	}
	f.solve(dst, b, w, false)
}

// SolveTrans sets dst to the solution x of Aᵀ x = b. dst and b may be the
// same slice.
func (f *LU) SolveTrans(dst, b []float64) {
	f.solve(dst, b, make([]float64, f.n), true)
}

// SolveMany solves A X = B (or Aᵀ X = B when trans is true) for several
// right-hand sides: dst[i] receives the solution for b[i]. dst[i] and b[i]
// may be the same slice.
func (f *LU) SolveMany(dst, b [][]float64, trans bool) {
	if len(dst) != len(b) {
		panic("sparse: SolveMany: dst and b differ in length")
	}
	w := make([]float64, f.n)
	for i := range b {
		f.solve(dst[i], b[i], w, trans)
	}
}

func (f *LU) solve(dst, b, w []float64, trans bool) {
	n := f.n
	if len(dst) != n || len(b) != n || len(w) != n {
		panic("sparse: solve: length mismatch")
	}
	if f.banded {
		f.bandSolve(dst, b, w, trans)
		return
	}
	if f.p == nil {
		panic("sparse: solve with a failed factorisation")
	}
	if !trans {
		if n == 2 && f.two.ok {
			f.solve2(dst, b)
			return
		}
		f.solveN(dst, b, w)
		return
	}
	f.solveTrans(dst, b, w)
}

// solveN is solve without transposition, for any order.
func (f *LU) solveN(dst, b, w []float64) {
	n := f.n
	{
		// P A Q = L U: w = P b; L z = w; U y = z; x = Q y. The index
		// slices are cut to n and to each column so that the compiler
		// can drop most bounds checks.
		p, q, lp, up, udiag := f.p[:n], f.q[:n], f.lp[:n+1], f.up[:n+1], f.udiag[:n]
		li, lx, ui, ux := f.li, f.lx, f.ui, f.ux
		for k, r := range p {
			w[k] = b[r]
		}
		for k := range n {
			wk := w[k]
			if wk == 0 {
				continue
			}
			rows, vals := li[lp[k]:lp[k+1]], lx[lp[k]:lp[k+1]]
			for t, r := range rows {
				w[r] -= vals[t] * wk
			}
		}
		for k := n - 1; k >= 0; k-- {
			w[k] /= udiag[k]
			wk := w[k]
			if wk == 0 {
				continue
			}
			rows, vals := ui[up[k]:up[k+1]], ux[up[k]:up[k+1]]
			for t, r := range rows {
				w[r] -= vals[t] * wk
			}
		}
		for k, c := range q {
			dst[c] = w[k]
		}
	}
}

// solveTrans is solve with transposition, for any order.
func (f *LU) solveTrans(dst, b, w []float64) {
	n := f.n
	// Aᵀ = Q Uᵀ Lᵀ P: w = Qᵀ b; Uᵀ z = w; Lᵀ y = z; x = Pᵀ y.
	for k := range n {
		w[k] = b[f.q[k]]
	}
	for k := range n {
		s := w[k]
		for pp := f.up[k]; pp < f.up[k+1]; pp++ {
			s -= f.ux[pp] * w[f.ui[pp]]
		}
		w[k] = s / f.udiag[k]
	}
	for k := n - 1; k >= 0; k-- {
		s := w[k]
		for pp := f.lp[k]; pp < f.lp[k+1]; pp++ {
			s -= f.lx[pp] * w[f.li[pp]]
		}
		w[k] = s
	}
	for k := range n {
		dst[f.p[k]] = w[k]
	}
}

// Cond1 estimates the 1-norm condition number ‖A‖₁‖A⁻¹‖₁ of the factored
// matrix. ‖A⁻¹‖₁ comes from Hager's method with Higham's refinements
// (Higham, "FORTRAN codes for estimating the one-norm of a real or complex
// matrix", ACM TOMS 14(4), 1988): a few solves with A and Aᵀ, never the
// inverse. The estimate is a lower bound, usually within a factor of 3.
func (f *LU) Cond1() float64 {
	anorm := f.anorm
	if f.banded {
		anorm = f.bd.norm1()
	}
	return anorm * f.InvNorm1()
}

// InvNorm1 estimates ‖A⁻¹‖₁ (see Cond1).
func (f *LU) InvNorm1() float64 {
	n := f.n
	if n == 0 {
		return 0
	}
	w := make([]float64, n)
	x := make([]float64, n)
	y := make([]float64, n)
	for i := range x {
		x[i] = 1 / float64(n)
	}
	sgn := make([]float64, n)
	est := 0.0
	last := -1
	for iter := 0; iter < 5; iter++ {
		f.solve(y, x, w, false) // y = A⁻¹ x
		est = max(est, norm1(y))
		for i, v := range y {
			if v >= 0 {
				sgn[i] = 1
			} else {
				sgn[i] = -1
			}
		}
		f.solve(y, sgn, w, true) // z = A⁻ᵀ sign(y), held in y
		j, zmax := 0, -1.0
		for i, v := range y {
			if a := math.Abs(v); a > zmax {
				j, zmax = i, a
			}
		}
		if zmax <= dot(y, x) || j == last {
			break
		}
		last = j
		clear(x)
		x[j] = 1
	}
	// Higham's extra test vector guards against the worst cases of Hager's.
	for i := range x {
		s := 1 + float64(i)/float64(max(n-1, 1))
		if i%2 == 1 {
			s = -s
		}
		x[i] = s
	}
	f.solve(y, x, w, false)
	if alt := 2 * norm1(y) / float64(3*n); alt > est {
		est = alt
	}
	return est
}

func norm1(v []float64) float64 {
	s := 0.0
	for _, a := range v {
		s += math.Abs(a)
	}
	return s
}

func dot(a, b []float64) float64 {
	s := 0.0
	for i := range a {
		s += a[i] * b[i]
	}
	return s
}
