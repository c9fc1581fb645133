package sparse

import (
	"cmp"
	"math"
	"slices"
)

// Band mode: when the matrix, with its rows and columns in a band order
// (see chooseBand), is narrow, it is factored as a dense band with partial
// pivoting (the scheme of LAPACK's gbtf2) on one contiguous array instead
// of by the sparse elimination. See the package documentation for the rule
// that chooses it.

// bandMinN is the smallest order factored in band mode.
const bandMinN = 8

// bandRatio and bandSlack are the constants of the band rule: band mode is
// taken when (2kl+ku+1)·n ≤ bandRatio·nnz(A) + bandSlack.
const (
	bandRatio = 4
	bandSlack = 64
)

// useBand reports whether a matrix of order n with nnz entries and, in the
// band order, lower and upper bandwidths kl and ku is factored in band mode.
func useBand(n, nnz, kl, ku int) bool {
	return n >= bandMinN && (2*kl+ku+1)*n <= bandRatio*nnz+bandSlack
}

// bandLU is the state of band mode. The band order puts at position k the
// column q[k] (LU.q, set by chooseBand) and the row prow[k]; B is A in that
// order. B's
// band is stored by columns as LAPACK stores it: B(i,j) at
// ab[j*ldab + kl+ku + i-j], with kl extra rows above for the fill of the
// row interchanges, so U has ku+kl superdiagonals. After the
// factorisation P B = L U, U is in rows 0..kl+ku of each column (diagonal
// at row kl+ku), and the multipliers of L below it.
type bandLU struct {
	kl, ku, ldab int
	ab           []float64 // the band, ldab rows by n columns
	ipiv         []int     // at step j row j was swapped with row ipiv[j]
	rdiag        []float64 // reciprocals of U's diagonal
	bpos         []int     // bpos[p]: the place in ab of the CSR entry p
	prow         []int     // prow[k]: the caller's row at position k
	// The values as given, and B's column j as indices into them,
	// src[cp[j]:cp[j+1]]: for ||A||₁ and for the exact singularity test.
	vals    []float64
	cp, src []int
	gmax    float64 // largest |entry| of A (NaN when there is a NaN)
	ok      bool    // factors ready for solving
}

// chooseBand works out the bandwidths of the matrix in the band order and,
// when the band rule says so, prepares band mode (f.banded). It needs q and
// pref, and every column matched to a row.
//
// The row order is free, as partial pivoting chooses the rows anyway, and
// so is the column order, as the band mode does not use the sparse one's
// pivot preferences. Three orders are tried and the narrowest band
// (smallest 2kl+ku) kept, the first on ties: the columns in the order q
// with their matched rows; the columns in the order q with the rows sorted
// by their first and last column; the columns as given with the rows so
// sorted. The matching prefers large entries, so on a tridiagonal matrix
// it may take off-diagonal entries, and RCM on the matched pattern then
// widens the band to kl = ku = 2: the other orders find the tridiagonal
// band again.
func (f *LU) chooseBand(a *CSR) bool {
	n := f.n
	f.banded = false
	if n < bandMinN || f.noBand {
		return false
	}
	rowpos := make([]int, n)
	colpos := make([]int, n)
	prow := make([]int, n)
	for k, c := range f.q {
		r := f.pref[c]
		if r < 0 {
			return false // structurally singular: the sparse path says where
		}
		rowpos[r] = k
		colpos[c] = k
		prow[k] = r
	}
	q := f.q
	kl, ku := bandwidths(a, rowpos, colpos)
	natural := make([]int, n)
	for i := range natural {
		natural[i] = i
	}
	for _, q2 := range [][]int{f.q, natural} {
		colpos2 := make([]int, n)
		for k, c := range q2 {
			colpos2[c] = k
		}
		prow2, rowpos2 := rowsByFirst(a, colpos2)
		if kl2, ku2 := bandwidths(a, rowpos2, colpos2); 2*kl2+ku2 < 2*kl+ku {
			kl, ku, q, colpos, rowpos, prow = kl2, ku2, q2, colpos2, rowpos2, prow2
		}
	}
	nnz := a.RowPtr[n]
	if !useBand(n, nnz, kl, ku) {
		return false
	}
	b := &f.bd
	f.q = q
	ldab := 2*kl + ku + 1
	kv := kl + ku
	b.kl, b.ku, b.ldab = kl, ku, ldab
	b.prow = prow
	b.cp = slices.Grow(b.cp[:0], n+1)[:n+1]
	clear(b.cp)
	for _, j := range a.ColIdx[:nnz] {
		b.cp[colpos[j]+1]++
	}
	for j := range n {
		b.cp[j+1] += b.cp[j]
	}
	next := slices.Clone(b.cp[:n])
	b.src = slices.Grow(b.src[:0], nnz)[:nnz]
	b.bpos = slices.Grow(b.bpos[:0], nnz)[:nnz]
	for i := range n {
		ri := rowpos[i]
		for p := a.RowPtr[i]; p < a.RowPtr[i+1]; p++ {
			cj := colpos[a.ColIdx[p]]
			b.src[next[cj]] = p
			next[cj]++
			b.bpos[p] = cj*ldab + kv + ri - cj
		}
	}
	b.vals = slices.Grow(b.vals[:0], nnz)[:nnz]
	b.ab = slices.Grow(b.ab[:0], n*ldab)[:n*ldab]
	b.ipiv = slices.Grow(b.ipiv[:0], n)[:n]
	b.rdiag = slices.Grow(b.rdiag[:0], n)[:n]
	b.ok = false
	f.banded = true
	return true
}

// rowsByFirst orders the rows of a by their first and then their last
// column position (colpos), ties by index: prow is position -> row and
// rowpos its inverse.
func rowsByFirst(a *CSR, colpos []int) (prow, rowpos []int) {
	n := a.Rows
	first, last := make([]int, n), make([]int, n)
	prow = make([]int, n)
	for i := range n {
		lo, hi := n, -1
		for _, j := range a.ColIdx[a.RowPtr[i]:a.RowPtr[i+1]] {
			lo, hi = min(lo, colpos[j]), max(hi, colpos[j])
		}
		first[i], last[i] = lo, hi
		prow[i] = i
	}
	slices.SortFunc(prow, func(x, y int) int {
		if c := cmp.Compare(first[x], first[y]); c != 0 {
			return c
		}
		if c := cmp.Compare(last[x], last[y]); c != 0 {
			return c
		}
		return cmp.Compare(x, y)
	})
	rowpos = make([]int, n)
	for k, r := range prow {
		rowpos[r] = k
	}
	return prow, rowpos
}

// bandwidths returns the lower and upper bandwidths of a with row i at
// position rowpos[i] and column j at colpos[j].
func bandwidths(a *CSR, rowpos, colpos []int) (kl, ku int) {
	for i := range a.Rows {
		ri := rowpos[i]
		for _, j := range a.ColIdx[a.RowPtr[i]:a.RowPtr[i+1]] {
			if d := ri - colpos[j]; d > kl {
				kl = d
			} else if -d > ku {
				ku = -d
			}
		}
	}
	return kl, ku
}

// bandFactor scatters the CSR values val into the band and factors it with
// partial pivoting: at step j the largest of the kl+1 candidates of column
// j is the pivot, its row is swapped with row j over the columns U reaches
// so far, the multipliers are scaled and the rest of the band gets the
// rank-1 update. A pivot column of zeros, or a pivot not above tiny times
// the largest magnitude of its column (as given, or in U), is singular.
func (f *LU) bandFactor(val []float64) error {
	f.fresh++
	b := &f.bd
	b.ok = false
	n, kl, ku, ldab := f.n, b.kl, b.ku, b.ldab
	kv := kl + ku
	ab := b.ab[:n*ldab]
	clear(ab)
	// Scatter, taking the largest magnitude for the singularity test's
	// quick bound on the way; a NaN makes the bound NaN.
	bpos := b.bpos
	val = val[:len(bpos)]
	g, nan := 0.0, false
	for p, pos := range bpos {
		v := val[p]
		ab[pos] = v
		if a := math.Abs(v); a > g {
			g = a
		} else if a != a {
			nan = true
		}
	}
	if nan {
		g = math.NaN()
	}
	b.gmax = g
	copy(b.vals, val)

	if kl == 1 {
		if err := b.eliminate1(n, f.q); err != nil {
			return err
		}
		b.ok = true
		return nil
	}
	ipiv, rdiag := b.ipiv[:n], b.rdiag[:n]
	ju := 0       // the last column U reaches so far
	ubound := 0.0 // largest |entry| of U so far
	for j := range n {
		km := min(kl, n-1-j)
		d := j*ldab + kv // B(j,j)
		cand := ab[d : d+km+1]
		jp, amax := 0, math.Abs(cand[0])
		for i := 1; i < len(cand); i++ {
			if a := math.Abs(cand[i]); a > amax {
				jp, amax = i, a
			}
		}
		if amax == 0 {
			return &SingularError{Col: f.q[j], Row: -1}
		}
		if lim := max(b.gmax, ubound); !(amax > tiny*lim && amax <= math.MaxFloat64) && !b.pivotOK(j, amax, ab[d-min(j, kv):d]) {
			return &SingularError{Col: f.q[j], Row: b.rowAt(j, j+jp)}
		}
		pivot := cand[jp]
		ipiv[j] = j + jp
		ju = max(ju, min(j+ku+jp, n-1))
		if jp != 0 {
			// Rows j and j+jp in columns j..ju: B(r,c) is at
			// c*(ldab-1) + kv + r.
			for c := j; c <= ju; c++ {
				base := c*(ldab-1) + kv
				ab[base+j], ab[base+j+jp] = ab[base+j+jp], ab[base+j]
			}
		}
		r := 1 / pivot
		rdiag[j] = r
		if km == 0 {
			continue
		}
		l := ab[d+1 : d+1+km]
		for i := range l {
			l[i] *= r
		}
		for c := j + 1; c <= ju; c++ {
			base := c*(ldab-1) + kv + j // B(j,c)
			t := ab[base]
			if a := math.Abs(t); a > ubound {
				ubound = a
			}
			dst := ab[base+1 : base+1+len(l)]
			dst = dst[:len(l)] // lets the compiler drop the bounds checks
			i := 0
			for ; i+4 <= len(l); i += 4 {
				d4, l4 := dst[i:i+4:i+4], l[i:i+4:i+4]
				d4[0] -= l4[0] * t
				d4[1] -= l4[1] * t
				d4[2] -= l4[2] * t
				d4[3] -= l4[3] * t
			}
			for ; i < len(l); i++ {
				dst[i] -= l[i] * t
			}
		}
	}
	b.ok = true
	return nil
}

// eliminate1 is the elimination of bandFactor for kl = 1 (tridiagonal and
// other one-below-the-diagonal bands: stage-by-stage models with one
// unknown per stage). On such a band the chain from one pivot to the next
// is the whole cost, so the next diagonal entry is carried in a register
// and formed as a - (other·u)/pivot, a division and a subtraction after
// the pivot is known, rather than through the stored multiplier.
func (b *bandLU) eliminate1(n int, q []int) error {
	ldab, ku := b.ldab, b.ku
	kv := 1 + ku
	ab := b.ab[:n*ldab]
	ipiv, rdiag := b.ipiv[:n], b.rdiag[:n]
	ju := 0
	gmax := b.gmax
	ubound := 0.0       // largest |entry| of U so far
	tlim := tiny * gmax // tiny·max(gmax, ubound): NaN when gmax is
	diag := ab[kv]      // B(j,j) as updated so far
	for j := range n - 1 {
		d := j*ldab + kv
		pivot, other, jp := diag, ab[d+1], 0 // B(j+1,j): row j+1 is as given
		if math.Abs(other) > math.Abs(diag) {
			pivot, other, jp = other, diag, 1
		}
		amax := math.Abs(pivot)
		if !(amax > tlim && amax <= math.MaxFloat64) {
			if amax == 0 {
				return &SingularError{Col: q[j], Row: -1}
			}
			if !b.pivotOK(j, amax, ab[d-min(j, kv):d]) {
				return &SingularError{Col: q[j], Row: b.rowAt(j, j+jp)}
			}
		}
		ipiv[j] = j + jp
		r := 1 / pivot
		rdiag[j] = r
		ab[d] = pivot
		l := other * r
		ab[d+1] = l
		ju = max(ju, min(j+ku+jp, n-1))
		// Column j+1 in registers: u = B(j,j+1), a = B(j+1,j+1) after
		// the interchange.
		e := d + ldab - 1 // B(j,j+1)
		u, a := ab[e], ab[e+1]
		if jp != 0 {
			u, a = a, u
		}
		ab[e] = u
		diag = a - other*u/pivot
		umax := math.Abs(u)
		if jp != 0 {
			for c := j + 2; c <= ju; c++ {
				base := c*(ldab-1) + kv + j // B(j,c)
				t := ab[base+1]
				ab[base+1] = ab[base] - l*t
				ab[base] = t
				umax = max(umax, math.Abs(t))
			}
		} else {
			for c := j + 2; c <= ju; c++ {
				base := c*(ldab-1) + kv + j
				t := ab[base]
				ab[base+1] -= l * t
				umax = max(umax, math.Abs(t))
			}
		}
		if umax > ubound {
			ubound = umax
			tlim = tiny * max(gmax, ubound)
		}
	}
	j := n - 1
	d := j*ldab + kv
	amax := math.Abs(diag)
	if amax == 0 {
		return &SingularError{Col: q[j], Row: -1}
	}
	if !(amax > tlim && amax <= math.MaxFloat64) && !b.pivotOK(j, amax, ab[d-min(j, kv):d]) {
		return &SingularError{Col: q[j], Row: b.rowAt(j, j)}
	}
	ipiv[j] = j
	rdiag[j] = 1 / diag
	ab[d] = diag
	return nil
}

// pivotOK is the singularity test of the pivot of column j, of magnitude
// amax > 0: the pivot must be finite and above tiny times the largest
// magnitude of its column, as given or in U (ucol). The eliminations test
// first against a bound of that, the largest entry of A and of U so far,
// which settles almost every pivot; pivotOK looks at the column itself, for
// a pivot that fails the bound (or when there is a NaN).
func (b *bandLU) pivotOK(j int, amax float64, ucol []float64) bool {
	if amax > math.MaxFloat64 {
		return false
	}
	scale := 0.0
	for _, v := range ucol {
		scale = maxAbs(scale, v)
	}
	for _, p := range b.src[b.cp[j]:b.cp[j+1]] {
		scale = maxAbs(scale, b.vals[p])
	}
	return amax > tiny*scale
}

// norm1 is ||A||₁ from the values as given.
func (b *bandLU) norm1() float64 {
	m := 0.0
	for j := range len(b.cp) - 1 {
		s := 0.0
		for _, p := range b.src[b.cp[j]:b.cp[j+1]] {
			s += math.Abs(b.vals[p])
		}
		if s > m || s != s {
			m = s
		}
	}
	return m
}

// rowAt returns the caller's row at position k after the interchanges of
// steps 0..j-1 (for an error message; it allocates).
func (b *bandLU) rowAt(j, k int) int {
	rows := slices.Clone(b.prow)
	for i, l := range b.ipiv[:j] {
		rows[i], rows[l] = rows[l], rows[i]
	}
	return rows[k]
}

// bandSolve solves with the band factors (see solve). The diagonal of U is
// applied by its reciprocals: a division in the chain of the substitution
// costs more than the rest of a narrow band's step.
func (f *LU) bandSolve(dst, rhs, w []float64, trans bool) {
	b := &f.bd
	if !b.ok {
		panic("sparse: solve with a failed factorisation")
	}
	n, kl, ldab := f.n, b.kl, b.ldab
	kv := kl + b.ku
	ab := b.ab[:n*ldab]
	ipiv, rdiag, prow, q := b.ipiv[:n], b.rdiag[:n], b.prow[:n], f.q[:n]
	w = w[:n]
	if !trans && kl == 1 {
		b.solve1(dst, rhs, w, q)
		return
	}
	if !trans {
		// B = Pᵀ L U with B(k,c) = A(prow[k], q[c]): w = the rows of b
		// in band order; L z = P w; U y = z; x = Q y.
		for k, r := range prow {
			w[k] = rhs[r]
		}
		for j := range n - 1 {
			if l := ipiv[j]; l != j {
				w[l], w[j] = w[j], w[l]
			}
			wj := w[j]
			km := min(kl, n-1-j)
			d := j*ldab + kv
			wl := w[j+1 : j+1+km]
			for i, v := range ab[d+1 : d+1+km] {
				wl[i] -= v * wj
			}
		}
		for j := n - 1; j >= 0; j-- {
			wj := w[j] * rdiag[j]
			w[j] = wj
			u := min(j, kv)
			d := j*ldab + kv
			wu := w[j-u : j]
			for i, v := range ab[d-u : d] {
				wu[i] -= v * wj
			}
		}
		for k, c := range q {
			dst[c] = w[k]
		}
		return
	}
	// Aᵀ x = b is Bᵀ y = b' with b'[k] = b[q[k]] and x[prow[k]] = y[k];
	// Bᵀ = Uᵀ Lᵀ P: Uᵀ z = b'; Lᵀ v = z; y = Pᵀ v.
	for k, c := range q {
		w[k] = rhs[c]
	}
	for j := range n {
		u := min(j, kv)
		d := j*ldab + kv
		wu := w[j-u : j]
		s := w[j]
		for i, v := range ab[d-u : d] {
			s -= v * wu[i]
		}
		w[j] = s * rdiag[j]
	}
	for j := n - 2; j >= 0; j-- {
		km := min(kl, n-1-j)
		d := j*ldab + kv
		wl := w[j+1 : j+1+km]
		s := w[j]
		for i, v := range ab[d+1 : d+1+km] {
			s -= v * wl[i]
		}
		w[j] = s
		if l := ipiv[j]; l != j {
			w[l], w[j] = w[j], w[l]
		}
	}
	for k, r := range prow {
		dst[r] = w[k]
	}
}

// solve1 is the solve with A of bandSolve for kl = 1: the forward
// substitution carries the running entry in a register, and the back
// substitution takes U by rows, so that neither goes through memory
// between steps.
func (b *bandLU) solve1(dst, rhs, w []float64, q []int) {
	n, ldab, kv := len(w), b.ldab, 1+b.ku
	ab := b.ab[:n*ldab]
	ipiv, rdiag, prow := b.ipiv[:n], b.rdiag[:n], b.prow[:n]
	for k, r := range prow {
		w[k] = rhs[r]
	}
	cur := w[0]
	for j := range n - 1 {
		nxt := w[j+1]
		if ipiv[j] != j {
			cur, nxt = nxt, cur
		}
		w[j] = cur
		cur = nxt - ab[j*ldab+kv+1]*cur
	}
	w[n-1] = cur
	// U(j, j+t) is at (j+t)*ldab + kv - t; the far terms first, the
	// nearest, just computed, last from a register.
	next := w[n-1] * rdiag[n-1]
	w[n-1] = next
	for j := n - 2; j >= 0; j-- {
		s := w[j]
		m := min(kv, n-1-j)
		pos := (j+m)*ldab + kv - m
		for t := m; t >= 2; t-- {
			s -= ab[pos] * w[j+t]
			pos -= ldab - 1
		}
		next = (s - ab[pos]*next) * rdiag[j]
		w[j] = next
	}
	for k, c := range q {
		dst[c] = w[k]
	}
}

// bandStats counts the stored entries of the band factors: L's multipliers
// and U's band, diagonal included.
func (f *LU) bandStats() (nnzL, nnzU int) {
	n, kl, kv := f.n, f.bd.kl, f.bd.kl+f.bd.ku
	for j := range n {
		nnzL += min(kl, n-1-j)
		nnzU += min(j, kv) + 1
	}
	return nnzL, nnzU
}

// copyFrom copies the band state of src into b, reusing b's storage.
func (b *bandLU) copyFrom(src *bandLU) {
	b.kl, b.ku, b.ldab, b.ok = src.kl, src.ku, src.ldab, src.ok
	b.ab = append(b.ab[:0], src.ab...)
	b.ipiv = append(b.ipiv[:0], src.ipiv...)
	b.rdiag = append(b.rdiag[:0], src.rdiag...)
	b.bpos = append(b.bpos[:0], src.bpos...)
	b.cp = append(b.cp[:0], src.cp...)
	b.src = append(b.src[:0], src.src...)
	b.vals = append(b.vals[:0], src.vals...)
	b.gmax = src.gmax
	b.prow = append(b.prow[:0], src.prow...)
}
