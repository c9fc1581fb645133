package interact

import (
	"math"

	"gonum.org/v1/gonum/blas"
	"gonum.org/v1/gonum/blas/blas64"
	"gonum.org/v1/gonum/floats"
	"gonum.org/v1/gonum/lapack"
	"gonum.org/v1/gonum/lapack/gonum"
	"gonum.org/v1/gonum/lapack/lapack64"
	"gonum.org/v1/gonum/mat"
)

// This file holds the factorisations the analysis repeats at every
// operating point, written to reuse their storage. Each computes bit for
// bit what gonum's mat.LU and mat.SVD compute (the same LAPACK routines with
// the same arguments, or for 2x2 the same arithmetic written out), so that an
// Analyzer gives exactly the numbers of the allocating code it replaces
// (for a 2x2 K all but det K, the Niederlinski indices and γ*, which differ
// in the last bits: see analyzer2.go); the tests compare them on many
// seeded random matrices.

var impl gonum.Implementation

// small2 is the range of magnitudes in which the written-out 2x2 routines
// are used. Outside it gonum's SVD rescales the matrix and the Householder
// step may rescale too; those rare matrices take the general routines.
const small2 = 0x1p-300

func in2Range(x ...float64) bool {
	for _, v := range x {
		if a := math.Abs(v); a != 0 && (a < small2 || a > 1/small2) || math.IsNaN(v) {
			return false
		}
	}
	return true
}

// luWork factors small square matrices into reusable storage.
type luWork struct {
	n     int
	lu    []float64
	ipiv  []int
	work  []float64
	iwork []int
	logs  []float64
}

func (w *luWork) resize(n int) {
	if w.n == n && w.lu != nil {
		return
	}
	w.n = n
	w.lu = resizeFloats(w.lu, n*n)
	w.ipiv = resizeInts(w.ipiv, n)
	w.work = resizeFloats(w.work, 4*n)
	w.iwork = resizeInts(w.iwork, n)
	w.logs = resizeFloats(w.logs, n)
}

// inverseDet is the package's inverseDet (mat.LU: its condition estimate,
// det from LogDet, K⁻¹ by solving with the identity) into reusable
// storage. dst is made n×n, reusing its storage; it is left unchanged when
// k is exactly singular. cond is gonum's ∞-norm estimate, or for a
// well-conditioned 2x2 the exact ∞-norm condition number (see inverseDet2).
func (w *luWork) inverseDet(dst *mat.Dense, k *mat.Dense) (cond, det float64) {
	n, _ := k.Dims()
	if n == 2 {
		if cond, det, ok := inverseDet2(dst, k); ok {
			return cond, det
		}
	}
	w.resize(n)
	g := blas64.General{Rows: n, Cols: n, Stride: n, Data: w.lu}
	raw := k.RawMatrix()
	for i := 0; i < n; i++ {
		copy(w.lu[i*n:i*n+n], raw.Data[i*raw.Stride:i*raw.Stride+n])
	}
	anorm := lapack64.Lange(mat.CondNorm, g, w.work)
	lapack64.Getrf(g, w.ipiv)
	cond = 1 / lapack64.Gecon(mat.CondNorm, g, anorm, w.work, w.iwork)
	det = w.det()
	if math.IsInf(cond, 1) || math.IsNaN(cond) {
		return math.Inf(1), det
	}
	reshape(dst, n, n)
	d := dst.RawMatrix()
	for i := 0; i < n; i++ {
		row := d.Data[i*d.Stride : i*d.Stride+n]
		for j := range row {
			row[j] = 0
		}
		row[i] = 1
	}
	lapack64.Getrs(blas.NoTrans, g, d, w.ipiv)
	return cond, det
}

// det is mat.LU.LogDet turned into det as inverseDet did.
func (w *luWork) det() float64 {
	sign := 1.0
	for i := 0; i < w.n; i++ {
		v := w.lu[i*w.n+i]
		if v < 0 {
			sign *= -1
		}
		if w.ipiv[i] != i {
			sign *= -1
		}
		w.logs[i] = math.Log(math.Abs(v))
	}
	return math.Exp(floats.Sum(w.logs)) * sign
}

// lu2Inverse is gonum's Dgetf2 (partial pivoting) and Dgetrs with the
// identity for the 2x2 [a00 a01; a10 a11], operation for operation: the
// inverse b00, b01, b10, b11 (row by row), U's pivots p0 and u11, whether
// the rows were swapped, and the exact ∞-norm condition number. ok is false
// when a pivot is zero or the condition number is above 1e10 (or not a
// number).
func lu2Inverse(a00, a01, a10, a11 float64) (b00, b01, b10, b11, p0, u11 float64, swap bool, cond float64, ok bool) {
	// Dgetf2, column 0: Idamax picks the first largest |a_i0|.
	swap = math.Abs(a10) > math.Abs(a00)
	if swap {
		a00, a01, a10, a11 = a10, a11, a00, a01
	}
	if a00 == 0 {
		return 0, 0, 0, 0, 0, 0, false, 0, false
	}
	l := a10 * (1 / a00)
	u11 = a11 + float64((-1*l)*a01)
	if u11 == 0 {
		return 0, 0, 0, 0, 0, 0, false, 0, false
	}
	// Dgetrs: B = P·I, then L (unit lower) and U solves, row by row.
	b00, b01, b10, b11 = 1.0, 0.0, 0.0, 1.0
	if swap {
		b00, b01, b10, b11 = b10, b11, b00, b01
	}
	if l != 0 {
		b10 += float64(-l * b00)
		b11 += float64(-l * b01)
	}
	t := 1 / u11
	b10 *= t
	b11 *= t
	if a01 != 0 {
		b00 += float64(-a01 * b10)
		b01 += float64(-a01 * b11)
	}
	t = 1 / a00
	b00 *= t
	b01 *= t
	// Exact ∞-norm condition number of the original matrix.
	// max (math.Max's rules, inlined), not maxPos: a NaN from an
	// overflowing inverse must fail the test.
	an := max(math.Abs(a00)+math.Abs(a01), math.Abs(a10)+math.Abs(a11))
	in := max(math.Abs(b00)+math.Abs(b01), math.Abs(b10)+math.Abs(b11))
	cond = an * in
	if !(cond <= 1e10) {
		return 0, 0, 0, 0, 0, 0, false, 0, false
	}
	return b00, b01, b10, b11, a00, u11, swap, cond, true
}

// inverseDet2 is inverseDet of a 2x2 written out: gonum's Dgetf2 (partial
// pivoting) and Dgetrs with the identity, operation for operation, and det
// as LogDet gives it. ok is false (and nothing is written) when the matrix
// is far from well conditioned or out of range: the general routine then
// gives the condition estimate that decides. The condition number returned
// is the exact ∞-norm one, at most 1e10, where gonum's estimate, a lower
// bound of it, is surely below ConditionLimit as well.
func inverseDet2(dst *mat.Dense, k *mat.Dense) (cond, det float64, ok bool) {
	raw := k.RawMatrix()
	a00, a01 := raw.Data[0], raw.Data[1]
	a10, a11 := raw.Data[raw.Stride], raw.Data[raw.Stride+1]
	if !in2Range(a00, a01, a10, a11) {
		return 0, 0, false
	}
	b00, b01, b10, b11, a00, u11, swap, cond, ok := lu2Inverse(a00, a01, a10, a11)
	if !ok {
		return 0, 0, false
	}
	// LogDet: sign from the diagonal and the swaps, magnitude through logs.
	sign := 1.0
	if a00 < 0 {
		sign *= -1
	}
	if swap {
		sign *= -1
	}
	if u11 < 0 {
		sign *= -1
	}
	det = math.Exp(math.Log(math.Abs(a00))+math.Log(math.Abs(u11))) * sign
	reshape(dst, 2, 2)
	d := dst.RawMatrix()
	d.Data[0], d.Data[1] = b00, b01
	d.Data[d.Stride], d.Data[d.Stride+1] = b10, b11
	return cond, det, true
}

// svdWork computes thin singular value decompositions into reusable storage,
// as mat.SVD.Factorize does.
type svdWork struct {
	m, n     int
	wantUV   bool
	lwork    int
	a, u, vt []float64
	s, work  []float64
}

func (w *svdWork) resize(m, n int, wantUV bool) {
	if w.m == m && w.n == n && w.wantUV == wantUV && w.a != nil {
		return
	}
	mn := min(m, n)
	w.m, w.n, w.wantUV = m, n, wantUV
	w.a = make([]float64, m*n)
	w.s = make([]float64, mn)
	w.u, w.vt = make([]float64, m*mn), make([]float64, mn*n)
	jobU, jobVT := w.jobs()
	q := []float64{0}
	lapack64.Gesvd(jobU, jobVT, w.ga(), w.gu(), w.gvt(), w.s, q, -1)
	w.lwork = int(q[0])
	w.work = make([]float64, w.lwork)
}

func (w *svdWork) jobs() (lapack.SVDJob, lapack.SVDJob) {
	if w.wantUV {
		return lapack.SVDStore, lapack.SVDStore
	}
	return lapack.SVDNone, lapack.SVDNone
}

func (w *svdWork) ga() blas64.General {
	return blas64.General{Rows: w.m, Cols: w.n, Stride: w.n, Data: w.a}
}

func (w *svdWork) gu() blas64.General {
	mn := min(w.m, w.n)
	if !w.wantUV {
		return blas64.General{Rows: w.m, Cols: mn, Stride: 1, Data: nil}
	}
	return blas64.General{Rows: w.m, Cols: mn, Stride: mn, Data: w.u}
}

func (w *svdWork) gvt() blas64.General {
	mn := min(w.m, w.n)
	if !w.wantUV {
		return blas64.General{Rows: mn, Cols: w.n, Stride: 1, Data: nil}
	}
	return blas64.General{Rows: mn, Cols: w.n, Stride: w.n, Data: w.vt}
}

// factorize computes the singular values of k into w.s (and U, Vᵀ into w.u,
// w.vt when wantUV), reporting convergence.
func (w *svdWork) factorize(k *mat.Dense, wantUV bool) bool {
	m, n := k.Dims()
	w.resize(m, n, wantUV)
	raw := k.RawMatrix()
	for i := 0; i < m; i++ {
		copy(w.a[i*n:i*n+n], raw.Data[i*raw.Stride:i*raw.Stride+n])
	}
	jobU, jobVT := w.jobs()
	return lapack64.Gesvd(jobU, jobVT, w.ga(), w.gu(), w.gvt(), w.s, w.work, w.lwork)
}

// svdInto stores the thin SVD of k in r (reusing r's storage), as SVD does.
func (w *svdWork) svdInto(r *SVDResult, k *mat.Dense) error {
	m, n := k.Dims()
	mn := min(m, n)
	if r.U == nil {
		r.U, r.V = new(mat.Dense), new(mat.Dense)
	}
	if !r.U.IsEmpty() {
		if rr, cc := r.U.Dims(); rr != m || cc != mn {
			r.U.Reset()
		}
	}
	if !r.V.IsEmpty() {
		if rr, cc := r.V.Dims(); rr != n || cc != mn {
			r.V.Reset()
		}
	}
	if r.U.IsEmpty() {
		r.U.ReuseAs(m, mn)
	}
	if r.V.IsEmpty() {
		r.V.ReuseAs(n, mn)
	}
	r.Values = resizeFloats(r.Values, mn)
	ud, vd := r.U.RawMatrix(), r.V.RawMatrix()
	if m == 2 && n == 2 && svd2(r.Values, ud.Data[0:2], ud.Data[ud.Stride:ud.Stride+2], vd.Data[0:2], vd.Data[vd.Stride:vd.Stride+2], k) {
		// done in closed form
	} else {
		if !w.factorize(k, true) {
			return errSVD
		}
		copy(r.Values, w.s)
		for i := 0; i < m; i++ {
			copy(ud.Data[i*ud.Stride:i*ud.Stride+mn], w.u[i*mn:i*mn+mn])
		}
		for i := 0; i < mn; i++ {
			for j := 0; j < n; j++ {
				vd.Data[j*vd.Stride+i] = w.vt[i*n+j]
			}
		}
	}
	r.Cond = 0
	if mn > 0 {
		r.Cond = r.Values[0] / r.Values[mn-1]
	}
	return nil
}

func resizeFloats(s []float64, n int) []float64 {
	if cap(s) < n {
		return make([]float64, n)
	}
	return s[:n]
}

// hypot is math.Hypot for finite arguments, the same operations as its
// assembly on amd64 and its Go code elsewhere (max·√(1+(min/max)²)), but
// inlined. The products in the written-out routines are converted to
// float64 so that no compiler fuses them into a multiply-add: the gonum
// kernels they copy (assembly) round every operation.
func hypot(p, q float64) float64 {
	p, q = math.Abs(p), math.Abs(q)
	if p < q {
		p, q = q, p
	}
	if p == 0 {
		return 0
	}
	q = q / p
	return p * math.Sqrt(1+float64(q*q))
}

// hypotPos is hypot(p, q) for a p > 0 (not NaN), the same operations
// without |p| and the test for zero.
func hypotPos(p, q float64) float64 {
	q = math.Abs(q)
	if p < q {
		p, q = q, p
	}
	q = q / p
	return p * math.Sqrt(1+float64(q*q))
}

// dbdsqrTol is Dbdsqr's relative tolerance, computed as Dbdsqr computes it.
var dbdsqrTol = math.Max(10, math.Min(100, math.Pow(0x1p-53, -1.0/8))) * 0x1p-53

// bidiag2 is gonum's Dgebd2 on the 2x2 [a00 a01; a10 a11]: one Householder
// reflector H = I - tau·v·vᵀ, v = (1, v1), zeroes a10 and leaves the upper
// bidiagonal [d0 e0; 0 d1]. The row reflector of a 2x2 is the identity.
func bidiag2(a00, a01, a10, a11 float64) (d0, e0, d1, v1, tau float64) {
	// Dlarfg(2, a00, [a10]).
	v1 = a10
	beta := a00
	if xnorm := math.Abs(a10); xnorm != 0 {
		beta = -math.Copysign(hypot(a00, xnorm), a00)
		tau = (beta - a00) / beta
		v1 = a10 * (1 / (a00 - beta))
	}
	// Dlarf(Left) on the second column: Dgemv then Dger, skipped when
	// Dlarf finds nothing to do.
	c0, c1 := a01, a11
	if tau != 0 {
		if v1 != 0 {
			if c0 != 0 || c1 != 0 {
				w := c0 + float64(c1*v1)
				c0 += float64(-tau * w)
				c1 += float64((-tau * v1) * w)
			}
		} else if c0 != 0 {
			c0 += float64(-tau * c0)
		}
	}
	return beta, c0, c1, v1, tau
}

// svd2 is gonum's thin Dgesvd of a 2x2 written out: bidiag2, the Q of the
// reflector (Dorg2r), and Dbdsqr's 2x2 step (Dlasv2 and the rotations), then
// positive values in decreasing order. It fills s, the rows of U and of V
// (V, not Vᵀ) and reports false, writing nothing, for matrices out of range.
func svd2(s, u0, u1, v0, v1 []float64, k *mat.Dense) bool {
	raw := k.RawMatrix()
	a00, a01 := raw.Data[0], raw.Data[1]
	a10, a11 := raw.Data[raw.Stride], raw.Data[raw.Stride+1]
	if !in2Range(a00, a01, a10, a11) || (a00 == 0 && a01 == 0 && a10 == 0 && a11 == 0) {
		return false
	}
	var sv [2]float64
	var u, v [4]float64
	if !svd2Of(&sv, &u, &v, a00, a01, a10, a11) {
		return false
	}
	s[0], s[1] = sv[0], sv[1]
	u0[0], u0[1], u1[0], u1[1] = u[0], u[1], u[2], u[3]
	v0[0], v0[1], v1[0], v1[1] = v[0], v[1], v[2], v[3]
	return true
}

// svd2Of is svd2 of [a00 a01; a10 a11], which the caller has checked to be
// in range and not zero, into s, u and v (U and V row by row). It writes
// nothing when it reports false.
func svd2Of(s *[2]float64, u, v *[4]float64, a00, a01, a10, a11 float64) bool {
	d0, e0, d1, hv, tau := bidiag2(a00, a01, a10, a11)
	if tau != 0 && hv == 0 {
		return false // underflow inside the reflector: leave it to LAPACK
	}
	// Dorg2r: Q = H.
	q00, q01, q10, q11 := 1-tau, 0.0, 0.0, 1.0 // Dscal by -tau = 0 stores +0
	if tau != 0 {
		q10 = hv * (-tau)
		w := q01 + float64(q11*hv)
		q01 += float64(-tau * w)
		q11 += float64((-tau * hv) * w)
	}
	vt00, vt01, vt10, vt11 := 1.0, 0.0, 0.0, 1.0
	// Dbdsqr, n = 2, upper.
	const unfl = 0x1p-1022
	tol := dbdsqrTol
	// Dbdsqr rotates unless |e0| <= thresh. thresh is at most
	// max(tol·|d0|, 24·unfl) (sminoa <= |d0|/√2), so an |e0| above that
	// decides without thresh's divisions.
	rotate := math.Abs(e0) > tol*math.Abs(d0) && math.Abs(e0) > float64(6*2*2)*unfl
	if !rotate {
		sminoa := math.Abs(d0)
		if sminoa != 0 {
			mu := math.Abs(d1) * (sminoa / (sminoa + math.Abs(e0)))
			if mu < sminoa { // math.Min: both are >= +0
				sminoa = mu
			}
		}
		sminoa /= math.Sqrt(2)
		thresh := maxPos(tol*sminoa, float64(6*2*2)*unfl) // both > +0 or the first +0
		rotate = !(math.Abs(e0) <= thresh)
	}
	if rotate {
		ssmin, ssmax, snr, csr, snl, csl := dlasv2(d0, e0, d1)
		d1, d0 = ssmin, ssmax
		vt00, vt10 = csr*vt00+snr*vt10, csr*vt10-snr*vt00
		vt01, vt11 = csr*vt01+snr*vt11, csr*vt11-snr*vt01
		q00, q01 = csl*q00+snl*q01, csl*q01-snl*q00
		q10, q11 = csl*q10+snl*q11, csl*q11-snl*q10
	}
	if d0 < 0 {
		d0 *= -1
		vt00 *= -1
		vt01 *= -1
	}
	if d1 < 0 {
		d1 *= -1
		vt10 *= -1
		vt11 *= -1
	}
	if !(d1 <= d0) {
		d0, d1 = d1, d0
		vt00, vt01, vt10, vt11 = vt10, vt11, vt00, vt01
		q00, q01 = q01, q00
		q10, q11 = q11, q10
	}
	*s = [2]float64{d0, d1}
	*u = [4]float64{q00, q01, q10, q11}
	*v = [4]float64{vt00, vt10, vt01, vt11}
	return true
}

// svd2ValuesOf is svd2Of's s alone, bit for bit, for a caller that does
// not want U and V: the same reflector and the same decision to rotate,
// and of Dlasv2 only the arithmetic of the values (dlasv2Values). Dlasv2
// gives the values signs that svd2Of then takes off again, which leaves
// their magnitudes unless a value is ±0 (or NaN), whose sign stays: for
// those it computes svd2Of in full. It writes nothing when it reports
// false, which it does when svd2Of does.
func svd2ValuesOf(s *[2]float64, a00, a01, a10, a11 float64) bool {
	d0, e0, d1, hv, tau := bidiag2(a00, a01, a10, a11)
	if tau != 0 && hv == 0 {
		return false // underflow inside the reflector: leave it to LAPACK
	}
	// svd2Of's decision to rotate.
	const unfl = 0x1p-1022
	tol := dbdsqrTol
	rotate := math.Abs(e0) > tol*math.Abs(d0) && math.Abs(e0) > float64(6*2*2)*unfl
	if !rotate {
		sminoa := math.Abs(d0)
		if sminoa != 0 {
			mu := math.Abs(d1) * (sminoa / (sminoa + math.Abs(e0)))
			if mu < sminoa {
				sminoa = mu
			}
		}
		sminoa /= math.Sqrt(2)
		thresh := maxPos(tol*sminoa, float64(6*2*2)*unfl)
		rotate = !(math.Abs(e0) <= thresh)
	}
	if rotate {
		ssmin, ssmax := dlasv2Values(d0, e0, d1)
		if !(ssmin > 0 && ssmax > 0) { // a zero or NaN: its sign is Dlasv2's
			var u, v [4]float64
			return svd2Of(s, &u, &v, a00, a01, a10, a11)
		}
		d1, d0 = ssmin, ssmax // signs aside, what svd2Of has here
	}
	if d0 < 0 {
		d0 *= -1
	}
	if d1 < 0 {
		d1 *= -1
	}
	if !(d1 <= d0) {
		d0, d1 = d1, d0
	}
	*s = [2]float64{d0, d1}
	return true
}

// dlasv2Values is dlasv2's ssmin and ssmax without their signs, which are
// |ssmin| and |ssmax| of dlasv2 (which sets the sign bits of these
// numbers, all >= 0): the same operations, without the rotations.
func dlasv2Values(f, g, h float64) (ssmin, ssmax float64) {
	const dlamchE = 0x1p-53
	ft := f
	fa := math.Abs(ft)
	ha := math.Abs(h)
	if ha > fa {
		ft = h
		fa, ha = ha, fa
	}
	gt := g
	ga := math.Abs(gt)
	if ga == 0 {
		return ha, fa
	}
	if ga > fa && (fa/ga) < dlamchE {
		if ha > 1 {
			return fa / (ga / ha), ga
		}
		return (fa / ga) * ha, ga
	}
	d := fa - ha
	l := d / fa
	if d == fa {
		l = 1
	}
	m := gt / ft
	t := 2 - l
	s := hypotPos(t, m)
	var r float64
	if l == 0 {
		r = math.Abs(m)
	} else {
		r = hypotPos(l, m)
	}
	a := 0.5 * (s + r)
	return ha / a, fa * a
}

// condNone2 is the singular values of the 2x2 m as gonum's Dgesvd without
// vectors gives them (Dgebd2, then Dlasq1, which for n = 2 is Dlas2). ok is
// false for matrices out of range.
func condNone2(m00, m01, m10, m11 float64) (ssmin, ssmax float64, ok bool) {
	if !in2Range(m00, m01, m10, m11) {
		return 0, 0, false
	}
	d0, e0, d1, hv, tau := bidiag2(m00, m01, m10, m11)
	if tau != 0 && hv == 0 {
		return 0, 0, false
	}
	ssmin, ssmax = impl.Dlas2(d0, e0, d1)
	return ssmin, ssmax, true
}

// dlasv2 is gonum's Dlasv2 (the SVD of the upper triangular [f g; 0 h])
// written out for svd2Of, with math.Hypot replaced by the inlined hypot
// (the same operations) and the branch for g = 0, which svd2Of never
// passes, kept. Expressions are as gonum writes them, so that a compiler
// fuses (or not) exactly what it fuses there, but for the signs of the
// results, combined as bits (the same signs).
func dlasv2(f, g, h float64) (ssmin, ssmax, snr, csr, snl, csl float64) {
	const dlamchE = 0x1p-53
	ft := f
	fa := math.Abs(ft)
	ht := h
	ha := math.Abs(h)
	pmax := 1
	swap := ha > fa
	if swap {
		pmax = 3
		ft, ht = ht, ft
		fa, ha = ha, fa
	}
	gt := g
	ga := math.Abs(gt)
	var clt, crt, slt, srt float64
	if ga == 0 {
		ssmin = ha
		ssmax = fa
		clt = 1
		crt = 1
		slt = 0
		srt = 0
	} else {
		gasmall := true
		if ga > fa {
			pmax = 2
			if (fa / ga) < dlamchE {
				gasmall = false
				ssmax = ga
				if ha > 1 {
					ssmin = fa / (ga / ha)
				} else {
					ssmin = (fa / ga) * ha
				}
				clt = 1
				slt = ht / gt
				srt = 1
				crt = ft / gt
			}
		}
		if gasmall {
			d := fa - ha
			l := d / fa
			if d == fa {
				l = 1
			}
			m := gt / ft
			t := 2 - l
			// 0 <= l <= 1 (fa >= ha, and fa > 0 here), so 1 <= t <= 2.
			s := hypotPos(t, m)
			var r float64
			if l == 0 {
				r = math.Abs(m)
			} else {
				r = hypotPos(l, m)
			}
			a := 0.5 * (s + r)
			ssmin = ha / a
			ssmax = fa * a
			if m == 0 {
				if l == 0 {
					t = math.Copysign(2, ft) * math.Copysign(1, gt)
				} else {
					t = gt/math.Copysign(d, ft) + m/t
				}
			} else {
				t = (m/(s+t) + m/(r+l)) * (1 + a)
			}
			l = hypotPos(2, t) // hypot(t, 2): the larger of |t| and 2 divides either way
			crt = 2 / l
			srt = t / l
			clt = (crt + srt*m) / a
			slt = (ht / ft) * srt / a
		}
	}
	if swap {
		csl = srt
		snl = crt
		csr = slt
		snr = clt
	} else {
		csl = clt
		snl = slt
		csr = crt
		snr = srt
	}
	// gonum's tsign is a product of factors Copysign(1, x), exact, so its
	// sign is the exclusive or of theirs, and only signs are taken from it:
	// the signs are combined as bits.
	const signBit = 1 << 63
	var tsign uint64
	switch pmax {
	case 1:
		tsign = math.Float64bits(csr) ^ math.Float64bits(csl) ^ math.Float64bits(f)
	case 2:
		tsign = math.Float64bits(snr) ^ math.Float64bits(csl) ^ math.Float64bits(g)
	case 3:
		tsign = math.Float64bits(snr) ^ math.Float64bits(snl) ^ math.Float64bits(h)
	}
	ssmax = math.Float64frombits(math.Float64bits(ssmax)&^signBit | tsign&signBit)
	tsign ^= math.Float64bits(f) ^ math.Float64bits(h)
	ssmin = math.Float64frombits(math.Float64bits(ssmin)&^signBit | tsign&signBit)
	return ssmin, ssmax, snr, csr, snl, csl
}
