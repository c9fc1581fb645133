package interact

import (
	"cmp"
	"math"
	"unsafe"

	"gonum.org/v1/gonum/mat"
)

// The 2x2 analysis, the envelope sweep's most common case, in closed form.
//
// Which steps keep the arithmetic of the general path and why: the RGA,
// K⁻¹ and everything built on them (scores, rankings, verdicts, β) come from
// the same two-row elimination as gonum's LU (inverseDet2's operations),
// and U, Σ, V from the same Householder step and 2x2 rotation as gonum's SVD
// (svd2). For a K with condition number κ, any other formula for λ_ij or
// for σ2 carries a different rounding error of relative size about κ·2⁻⁵³:
// λ11 = k11·k22/(k11·k22 - k12·k21) was measured (200 000 seeded hardMatrix
// 2x2s, |λ11| >= 1e-3) up to 1.9e-13 from the general path's already for
// κ < 1e3 and 3e-5 at κ ~ 1e11. Where σ1 ≈ σ2 the directions U, V are not
// determined by K at all, and only the same arithmetic gives the same ones.
// The elimination and the reflector are cheap, so they are kept and those
// numbers stay bit for bit. What changes:
//
//   - det K is the product of the pivots, u00·u11 with the sign of the row
//     swap, instead of exp(log|u00| + log|u11|) as mat.LU.LogDet gives it
//     (a few units in the last place apart); the Niederlinski indices follow.
//   - γ* is the closed form of Grosdidier, Morari & Holt (1985) from the
//     relative gains (see minCond2From) instead of the singular values of
//     the balanced matrix, where the two agree to about 1e-14.
//   - a brief analysis of every pairing ranks the two pairings itself
//     (pairings2, and brief2 for a sweep's gain sets), with
//     screener.detail's arithmetic.
//   - ∞-norm condition numbers above 1e10, exactly singular K and entries
//     out of in2Range's range take the general path as before, so the
//     singularity decisions and their messages are the general path's.

// brief2 is Analyze for what an envelope sweep asks at every point: a
// square 2x2 gain set without disturbances, analysed briefly with every
// pairing (Options.Brief, MaxPairings not 1), by an Analyzer whose results
// are its own (not the package function Analyze; z.route2). It computes
// what the general route computes (matrix2, then pairings2), with the same
// operations in the same order, written out in one function so that
// nothing is checked, loaded or stored twice:
//
//   - the options it depends on are decided once, in NewAnalyzer (route2,
//     unscaled);
//   - its results live in z.b2, which the general route never touches: the
//     two ranked pairings, their pairs and paired λ, and the index lists.
//     Their places are fixed, so checking that a result still points to
//     them needs no loads of the Analyzer's slices, and the ranking writes
//     each pairing's numbers into its rank's storage instead of moving
//     slices between the results;
//   - a pointer or slice is stored only where it is not already in place:
//     analysing one point after another it is in place, and a store costs
//     more than the comparison, with a write barrier while the garbage
//     collector runs.
//
// done is false, and nothing is set that the general route does not set
// again, when the gain set needs that route (gains out of in1Range's
// range, K ill-conditioned or singular, or K not 2x2).
//
// matrix2 and pairings2, which the general route uses, and brief2 repeat
// the same arithmetic: a change to one belongs in the other.
// TestBrief2SameAsGeneral holds the two routes to the same bits, and
// TestAnalyzerBits2Golden both to the recorded ones.
func (z *Analyzer) brief2(g *GainSet) (*Analysis, bool, error) {
	km := g.K
	if r, c := km.Dims(); r != 2 || c != 2 {
		return nil, false, nil // the general route panics
	}
	row0, row1 := km.RawRowView(0), km.RawRowView(1)
	k00, k01, k10, k11 := row0[0], row0[1], row1[0], row1[1]
	if !z.shaped2 {
		z.shape2()
	}
	v := &z.v2
	if z.unscaled {
		// Every factor is 1: copy K, as scaledInto does.
		*v.k = [4]float64{k00, k01, k10, k11}
	} else {
		fy, err := g.scaledInto(z.opts.Scaling, &z.k, &z.kd, z.fy)
		setSlice(&z.fy, fy)
		if err != nil {
			return nil, true, err
		}
		k := v.k
		k00, k01, k10, k11 = k[0], k[1], k[2], k[3]
	}
	if !in4Range(k00, k01, k10, k11) {
		return nil, false, nil
	}
	// The SVD, as svdInto gives it, first: its chain of divisions and
	// square roots is the longest, and the rest can proceed meanwhile.
	// Without directions, its values alone, the same bits.
	noDir := z.opts.NoDirections
	if noDir {
		if !svd2ValuesOf(v.sv, k00, k01, k10, k11) {
			return nil, false, nil
		}
	} else if !svd2Of(v.sv, v.u, v.v, k00, k01, k10, k11) {
		return nil, false, nil
	}
	// inverseDet2's LU and inverse.
	b00, b01, b10, b11, a00, u11, swap, _, ok := lu2Inverse(k00, k01, k10, k11)
	if !ok {
		return nil, false, nil
	}

	// The analysis's lists and matrices, where the general route puts
	// them (matrix2 below sets the rest).
	a, b := &z.a, &z.b2
	setString(&a.Source, g.Source)
	a.Scaling = z.opts.Scaling
	setString(&a.Caution, Caution)
	setSlice(&a.Outputs, g.Outputs)
	setSlice(&a.Inputs, g.Inputs)
	setSlice(&a.Disturbances, g.Disturbances)
	b.rows, b.cols = [2]int{0, 1}, [2]int{0, 1}
	setSlice2(&a.OutputIndex, &b.rows)
	setSlice2(&a.InputIndex, &b.cols)
	if a.K != &z.k {
		a.K = &z.k
	}
	if a.Kd != nil {
		a.Kd = nil
	}
	if a.Selection != nil {
		a.Selection = nil
	}
	if a.Method != "" {
		a.Method = ""
	}
	if a.Notes != nil {
		a.Notes = nil
	}
	if a.RGA != &z.rga {
		a.RGA = &z.rga
	}
	if noDir {
		if a.Sensitivity != nil {
			a.Sensitivity = nil
		}
		if a.SVD != &z.svdN {
			a.SVD = &z.svdN
		}
	} else {
		if a.Sensitivity != &z.sens {
			a.Sensitivity = &z.sens
		}
		if a.SVD != &z.svd {
			a.SVD = &z.svd
		}
	}

	// matrix2's arithmetic: det K, K⁻¹, Λ = K ∘ (K⁻¹)ᵀ, zeroRoundoff and
	// the sensitivities.
	det := float64(a00 * u11) // det2's arithmetic
	if swap {
		det = -det
	}
	*v.kinv = [4]float64{b00, b01, b10, b11}
	l00, l01, l10, l11 := float64(k00*b00), float64(k01*b10), float64(k10*b01), float64(k11*b11)
	lam00, lam01 := l00, l01 // before zeroRoundoff
	gamma := minCond2From(l00, l01)
	big := maxPos(maxPos(1, math.Abs(l00)), maxPos(math.Abs(l01), maxPos(math.Abs(l10), math.Abs(l11))))
	if tol := 1e-10 * big; true {
		if math.Abs(l00) < tol {
			l00 = 0
		}
		if math.Abs(l01) < tol {
			l01 = 0
		}
		if math.Abs(l10) < tol {
			l10 = 0
		}
		if math.Abs(l11) < tol {
			l11 = 0
		}
	}
	*v.rga = [4]float64{l00, l01, l10, l11}
	if !noDir {
		*v.sens = [4]float64{1 / l00, 1 / l01, 1 / l10, 1 / l11}
	}
	a.Det = det
	r := &z.svd
	s0, s1 := v.sv[0], v.sv[1]
	r.Cond = s0 / s1
	if noDir {
		// The same values and condition number, without U and V.
		n := &z.svdN
		setSlice2(&n.Values, v.sv)
		n.Cond = r.Cond
		if n.U != nil || n.V != nil {
			n.U, n.V = nil, nil
		}
	}
	if s1 == 0 || r.Cond > 1/0x1p-52 { // as minCondInto; not reached below cond 1e10
		return nil, true, &SingularError{What: "K", Cond: r.Cond}
	}
	m := lam00
	if lam01 < m {
		m = lam01
	}
	if math.Abs(m) >= 1e-3 && gamma <= 64 {
		if !noDir { // γ* is the formula's: the scalings are for Dl and Dr alone
			ak, bk, ck, dk := math.Abs(k00), math.Abs(k01), math.Abs(k10), math.Abs(k11)
			s := math.Sqrt(ak * ck / (bk * dk))
			q := ak / (s * dk)
			gq, gs := math.Sqrt(q), math.Sqrt(s)
			*v.dl = [2]float64{1 / gq, q / gq}
			*v.dr = [2]float64{1 / gs, s / gs}
		}
	} else if gamma, ok = minCond2(&z.k, z.dl, z.dr); !ok {
		// (γ* from the balanced matrix needs the scalings, with or
		// without NoDirections.)
		var err error
		if gamma, err = minCondInto(&z.k, r, &z.dl, &z.dr, &z.mw); err != nil {
			return nil, true, err
		}
	}
	a.MinCond = gamma
	if !noDir {
		setSlice2(&a.Dl, v.dl)
		setSlice2(&a.Dr, v.dr)
	} else if a.Dl != nil || a.Dr != nil {
		a.Dl, a.Dr = nil, nil
	}
	noted := gamma > z.th.CondHigh
	if noted {
		z.noteCondition()
	}

	// pairings2's arithmetic: both pairings, (0, 1) and (1, 0), judged as
	// screener.detail judges them (judge2's operations in its order) and
	// ranked as compareResults ranks them. A paired gain of 0 needs no test
	// of its own: its λ, k·(K⁻¹)_ji with K⁻¹ finite, is ±0, which the test
	// λ <= 0 rejects.
	lo, hi := z.th.LambdaLow, z.th.LambdaHigh
	rej0, rej1, cau0, cau1 := false, false, 0, 0
	if l00 <= 0 {
		rej0 = true
	} else if l00 < lo || l00 > hi {
		cau0++
	}
	if l11 <= 0 {
		rej0 = true
	} else if l11 < lo || l11 > hi {
		cau0++
	}
	if l01 <= 0 {
		rej1 = true
	} else if l01 < lo || l01 > hi {
		cau1++
	}
	if l10 <= 0 {
		rej1 = true
	} else if l10 < lo || l10 > hi {
		cau1++
	}
	sumAbs := math.Abs(l00) + math.Abs(l01) + math.Abs(l10) + math.Abs(l11) // screener.init's sum from +0: +0 + |λ| is |λ|
	rga0 := sumAbs + (math.Abs(l00-1) - math.Abs(l00))
	rga0 += math.Abs(l11-1) - math.Abs(l11)
	rga1 := sumAbs + (math.Abs(l01-1) - math.Abs(l01))
	rga1 += math.Abs(l10-1) - math.Abs(l10)
	score0, score1 := rga0+2*float64(cau0), rga1+2*float64(cau1)
	ni0, ni1 := math.NaN(), math.NaN()
	if p := k00 * k11; p != 0 {
		ni0 = det / p
	}
	if p := k01 * k10; p != 0 {
		ni1 = -det / p
	}
	ver0 := verdict2(rej0, cau0 > 0 || noted, l00, l11, &z.th)
	ver1 := verdict2(rej1, cau1 > 0 || noted, l01, l10, &z.th)
	// compareResults: rejected last, then by score (cmp.Compare), then by
	// pairing, and (0, 1) comes before (1, 0).
	second := rej0 // the pairing (0, 1) ranks second
	if rej0 == rej1 {
		second = score0 > score1 || (score1 != score1 && score0 == score0)
	}
	p0, p1 := &b.res[0], &b.res[1] // the results of (0, 1) and (1, 0)
	if second {
		p0, p1 = p1, p0
		b.pairs = [2][2]int{{1, 0}, {0, 1}}
		b.lambdas = [2][2]float64{{l01, l10}, {l00, l11}}
	} else {
		b.pairs = [2][2]int{{0, 1}, {1, 0}}
		b.lambdas = [2][2]float64{{l00, l11}, {l01, l10}}
	}
	p0.Niederlinski, p0.RGANumber, p0.Verdict, p0.Score = ni0, rga0, ver0, score0
	p1.Niederlinski, p1.RGANumber, p1.Verdict, p1.Score = ni1, rga1, ver1, score1
	// Brief results with their pairs and λ in b's arrays, storing only
	// what is not in place already.
	r0, r1 := &b.res[0], &b.res[1]
	setSlice2((*[]int)(&r0.Pairs), &b.pairs[0])
	setSlice2((*[]int)(&r1.Pairs), &b.pairs[1])
	setSlice2(&r0.Lambdas, &b.lambdas[0])
	setSlice2(&r1.Lambdas, &b.lambdas[1])
	if r0.Label != "" || r0.Reasons != nil || r0.Integrity != nil || r0.RDG != nil {
		r0.Label, r0.Reasons, r0.Integrity, r0.RDG = "", nil, nil, nil
	}
	if r1.Label != "" || r1.Reasons != nil || r1.Integrity != nil || r1.RDG != nil {
		r1.Label, r1.Reasons, r1.Integrity, r1.RDG = "", nil, nil, nil
	}
	rejected := 0
	if rej0 {
		rejected++
	}
	if rej1 {
		rejected++
	}
	a.Screened, a.Rejected = 2, rejected
	setSlice2(&a.Pairings, &b.res)
	return a, true, nil
}

// brief2Store is the storage of brief2's results, which the general route
// never touches: the two pairings in ranked order with their pairs and
// paired λ, and the index lists {0, 1}.
type brief2Store struct {
	res        [2]PairingResult
	pairs      [2][2]int
	lambdas    [2][2]float64
	rows, cols [2]int
}

// setSlice2 makes *dst the whole array *arr unless it is already: the
// same first element and length. A slice of the array with that length
// has its capacity too, since the array is 2 long.
func setSlice2[T any](dst *[]T, arr *[2]T) {
	if unsafe.SliceData(*dst) != &arr[0] || len(*dst) != 2 {
		*dst = arr[:]
	}
}

// verdict2 is screener.detail's verdict of a 2x2 pairing with paired
// relative gains la and lb.
func verdict2(rejected, cautioned bool, la, lb float64, th *Thresholds) Verdict {
	switch {
	case rejected:
		return Rejected
	case cautioned:
		return Cautioned
	case la >= th.GoodLow && la <= th.GoodHigh && lb >= th.GoodLow && lb <= th.GoodHigh:
		return Recommended
	}
	return Acceptable
}

// matrix2 fills the analysis's RGA, Sensitivity, Det, SVD, MinCond, Dl, Dr,
// notes and z.kinv for the 2x2 K = [k00 k01; k10 k11] in z.k. It reports
// false, having set nothing the general path does not overwrite, when K
// needs the general path (see above).
func (z *Analyzer) matrix2(k00, k01, k10, k11 float64) (ok bool, err error) {
	a := &z.a
	if !(in1Range(k00) && in1Range(k01) && in1Range(k10) && in1Range(k11)) { // in2Range, inlined
		return false, nil
	}
	if !z.shaped2 {
		z.shape2()
	}
	v := &z.v2
	// The SVD, as svdInto gives it, first: its chain of divisions and
	// square roots is the longest, and the rest can proceed meanwhile.
	if !svd2Of(v.sv, v.u, v.v, k00, k01, k10, k11) {
		return false, nil
	}
	// inverseDet2's LU and inverse.
	b00, b01, b10, b11, a00, u11, swap, _, ok := lu2Inverse(k00, k01, k10, k11)
	if !ok {
		return false, nil
	}
	det := float64(a00 * u11) // det2's arithmetic
	if swap {
		det = -det
	}
	*v.kinv = [4]float64{b00, b01, b10, b11}

	// Λ = K ∘ (K⁻¹)ᵀ, then zeroRoundoff and the sensitivities.
	l00, l01, l10, l11 := float64(k00*b00), float64(k01*b10), float64(k10*b01), float64(k11*b11)
	lam00, lam01 := l00, l01 // before zeroRoundoff
	gamma := minCond2From(l00, l01)
	big := maxPos(maxPos(1, math.Abs(l00)), maxPos(math.Abs(l01), maxPos(math.Abs(l10), math.Abs(l11))))
	if tol := 1e-10 * big; true {
		if math.Abs(l00) < tol {
			l00 = 0
		}
		if math.Abs(l01) < tol {
			l01 = 0
		}
		if math.Abs(l10) < tol {
			l10 = 0
		}
		if math.Abs(l11) < tol {
			l11 = 0
		}
	}
	*v.rga = [4]float64{l00, l01, l10, l11}
	*v.sens = [4]float64{1 / l00, 1 / l01, 1 / l10, 1 / l11}
	a.Det = det
	if a.RGA != &z.rga {
		a.RGA = &z.rga
	}
	if a.Sensitivity != &z.sens {
		a.Sensitivity = &z.sens
	}

	r := &z.svd
	s0, s1 := v.sv[0], v.sv[1]
	r.Cond = s0 / s1
	if a.SVD != r {
		a.SVD = r
	}
	if s1 == 0 || r.Cond > 1/0x1p-52 { // as minCondInto; not reached below cond 1e10
		return true, &SingularError{What: "K", Cond: r.Cond}
	}

	// γ* and the scalings that attain it, as minCond2 computes them; γ*
	// from λ where that formula agrees with minCond2's singular values of
	// the balanced matrix (see minCond2From), from those otherwise.
	m := lam00
	if lam01 < m {
		m = lam01
	}
	if math.Abs(m) >= 1e-3 && gamma <= 64 {
		ak, bk, ck, dk := math.Abs(k00), math.Abs(k01), math.Abs(k10), math.Abs(k11)
		s := math.Sqrt(ak * ck / (bk * dk))
		q := ak / (s * dk)
		gq, gs := math.Sqrt(q), math.Sqrt(s)
		*v.dl = [2]float64{1 / gq, q / gq}
		*v.dr = [2]float64{1 / gs, s / gs}
	} else if gamma, ok = minCond2(&z.k, z.dl, z.dr); !ok {
		if gamma, err = minCondInto(&z.k, r, &z.dl, &z.dr, &z.mw); err != nil {
			return true, err
		}
	}
	a.MinCond = gamma
	setSlice(&a.Dl, z.dl)
	setSlice(&a.Dr, z.dr)
	if gamma > z.th.CondHigh {
		z.noteCondition()
	}
	return true, nil
}

// det2 is the determinant of [a00 a01; a10 a11] as the Analyzer computes
// it: the product of the pivots of the elimination with partial pivoting
// that gonum's LU does (Dgetf2's operations), negated for a row swap. It
// is what mat.LU.LogDet gives but for the round trip through log and exp
// (a few units in the last place). A zero first column gives 0.
func det2(a00, a01, a10, a11 float64) float64 {
	swap := math.Abs(a10) > math.Abs(a00)
	if swap {
		a00, a01, a10, a11 = a10, a11, a00, a01
	}
	if a00 == 0 {
		return 0
	}
	l := a10 * (1 / a00)
	u11 := a11 + float64((-1*l)*a01)
	det := float64(a00 * u11)
	if swap {
		det = -det
	}
	return det
}

// view2 is the storage brief2, matrix2 and pairings2 fill, as arrays: K,
// K⁻¹, the RGA, the sensitivities, U and V (2x2, row by row) and the
// singular values and scalings. shape2 sets it; it is valid while
// z.shaped2 holds, which Analyze clears for a gain set that is not 2x2
// (the only kind that reshapes K) and before the general path reshapes the
// others.
type view2 struct {
	k, kinv, rga, sens, u, v *[4]float64
	sv, dl, dr               *[2]float64
}

// shape2 makes the matrices and slices matrix2 fills 2x2 (2 long), points
// z.v2 at them, and records it in z.shaped2, which the general path
// clears.
func (z *Analyzer) shape2() {
	r := &z.svd
	if r.U == nil {
		r.U, r.V = new(mat.Dense), new(mat.Dense)
	}
	v := &z.v2
	v.k, v.kinv, v.rga, v.sens, v.u, v.v = dense4(&z.k), dense4(&z.kinv), dense4(&z.rga), dense4(&z.sens), dense4(r.U), dense4(r.V)
	r.Values = resizeFloats(r.Values, 2)
	z.dl, z.dr = resizeFloats(z.dl, 2)[:2:2], resizeFloats(z.dr, 2)[:2:2]
	v.sv, v.dl, v.dr = (*[2]float64)(r.Values), (*[2]float64)(z.dl), (*[2]float64)(z.dr)
	z.shaped2 = true
}

// dense4 makes d a 2x2 matrix with rows of stride 2, reusing its storage,
// and returns its elements.
func dense4(d *mat.Dense) *[4]float64 {
	reshape(d, 2, 2)
	if d.RawMatrix().Stride != 2 { // a view: not the Analyzer's own matrices
		d.Reset()
		d.ReuseAs(2, 2)
	}
	return (*[4]float64)(d.RawMatrix().Data)
}

// minCond2From is the minimised condition number of a non-singular 2x2
// from its relative gains λ11 and λ12 (λ11 + λ12 = 1), Grosdidier, Morari &
// Holt (1985), Skogestad & Postlethwaite eq. A.70:
//
//	γ* = ||Λ||_i1 + √(||Λ||_i1² - 1),   ||Λ||_i1 = |λ| + |1 - λ| = 1 + 2t,
//
// where t >= 0 is how far λ11 lies outside [0, 1] (-λ11 below, -λ12
// above), written as 1 + 2(t + √(t(1+t))) so that nothing cancels.
//
// Its accuracy is that of λ. Measured against minCond2 (σ1/σ2 of the
// balanced matrix) on 10⁶ seeded random hard 2x2s (small_test.go's
// hardMatrix, ∞-norm condition up to 1e10), the two agree to 1.3e-14
// relative when min(λ11, λ12) is at least 1e-3 away from 0 and γ* <= 64.
// Closer to 0, t (or the sign of λ) comes from a λ with few correct
// digits and √t magnifies its error (7e-9 apart at t = 1e-15); above 64
// the balanced SVD's own error, about γ*·2⁻⁵³, shows (1e-13 apart at
// γ* = 300). The Analyzer uses the formula only inside that range.
func minCond2From(l11, l12 float64) float64 {
	t := 0.0
	switch {
	case l11 < 0:
		t = -l11
	case l12 < 0:
		t = -l12
	}
	return 1 + 2*(t+math.Sqrt(t*(1+t)))
}

// maxPos is math.Max of two numbers that are not NaN and not both zero
// of different signs, without math.Max's call.
func maxPos(x, y float64) float64 {
	if x > y {
		return x
	}
	return y
}

// in1Range reports whether v is 0 or small2 <= |v| <= 1/small2 (false for
// NaN), comparing the bits of |v|: for numbers that are not negative, the
// order of the bits is the order of the numbers, with ±Inf and NaN above
// every finite one.
func in1Range(v float64) bool {
	const lo, hi = small2Bits << 1, big2Bits << 1
	b := math.Float64bits(v) << 1  // |v| without its sign
	return b == 0 || b-lo <= hi-lo // b < lo wraps around to above hi-lo
}

// in4Range is in1Range of a, b, c and d all together (in2Range of them),
// one comparison for the four: the bits of |v| less small2's, as in1Range
// compares them, with 0 for a zero, and the largest of those in range.
func in4Range(a, b, c, d float64) bool {
	return max(rangeKey(a), rangeKey(b), rangeKey(c), rangeKey(d)) <= (big2Bits-small2Bits)<<1
}

// rangeKey is 0 for v = ±0 and otherwise the bits of |v| (shifted left
// by one) less small2's: at most (big2Bits-small2Bits)<<1 exactly when v is
// within in1Range's range.
func rangeKey(v float64) uint64 {
	b := math.Float64bits(v) << 1
	if b == 0 {
		return 0
	}
	return b - small2Bits<<1
}

// small2Bits and big2Bits are the bits of small2 = 2⁻³⁰⁰ and 1/small2 =
// 2³⁰⁰: biased exponents 1023 ∓ 300, zero mantissas.
const small2Bits, big2Bits = uint64(1023-300) << 52, uint64(1023+300) << 52

// pairings2 screens and ranks both pairings of a 2x2 for a brief analysis
// that wants them all, with the numbers, verdicts and order that
// screener.detail and detailAll give (the same operations in the same
// order), without the general bookkeeping. Slot 0 holds the pairing
// (0, 1) and slot 1 the pairing (1, 0); the results point to them in
// ranked order, and pointers already in place are not stored again.
func (z *Analyzer) pairings2(k00, k01, k10, k11 float64) {
	a := &z.a
	rga := z.v2.rga
	l00, l01, l10, l11 := rga[0], rga[1], rga[2], rga[3]
	sumAbs := 0 + math.Abs(l00) // as screener.init sums, from +0
	sumAbs += math.Abs(l01)
	sumAbs += math.Abs(l10)
	sumAbs += math.Abs(l11)
	if len(z.slots) < 2 || len(z.res) != 2 {
		z.grow2()
	}
	slots := (*[2]resultSlot)(z.slots)
	s0, s1 := &slots[0], &slots[1]
	if len(s0.pairs) != 2 || len(s0.lambdas) != 2 || len(s1.pairs) != 2 || len(s1.lambdas) != 2 {
		z.grow2() // keeps the slots where they are
	}
	*(*[2]int)(s0.pairs) = [2]int{0, 1}
	*(*[2]int)(s1.pairs) = [2]int{1, 0}
	*(*[2]float64)(s0.lambdas) = [2]float64{l00, l11}
	*(*[2]float64)(s1.lambdas) = [2]float64{l01, l10}
	rdg0, rdg1 := 0, 0 // relative disturbance gains above RDGHigh
	if a.Kd != nil {
		_, nd := a.Kd.Dims()
		mulInto(&z.kinvD, &z.kinv, a.Kd)
		rdg0, rdg1 = z.rdg2(s0, 0, 1, nd), z.rdg2(s1, 1, 0, nd)
	}
	noted := len(a.Notes) > 0
	p0 := judge2(&z.th, l00, l11, k00, k11, sumAbs, a.Det, rdg0, noted)
	p1 := judge2(&z.th, l01, l10, k01, k10, sumAbs, -a.Det, rdg1, noted)
	a.Rejected = 0
	if p0.verdict == Rejected {
		a.Rejected++
	}
	if p1.verdict == Rejected {
		a.Rejected++
	}
	// compareResults: rejected last, then by score, then by pairing, and
	// (0, 1) comes before (1, 0).
	swap := false
	if rej0, rej1 := p0.verdict == Rejected, p1.verdict == Rejected; rej0 != rej1 {
		swap = rej0
	} else {
		swap = cmp.Compare(p0.score, p1.score) > 0
	}
	if swap {
		s0, s1 = s1, s0
		p0, p1 = p1, p0
	}
	withRDG := a.Kd != nil
	res := (*[2]PairingResult)(z.res)
	store2(&res[0], s0, &p0, withRDG)
	store2(&res[1], s1, &p1, withRDG)
	a.Screened = 2
	if !sameHeader(a.Pairings, z.res) {
		a.Pairings = z.res
	}
}

// grow2 readies the storage pairings2 fills: two slots with pairs and
// lambdas 2 long, and two results.
func (z *Analyzer) grow2() {
	for len(z.slots) < 2 {
		z.slots = append(z.slots, resultSlot{})
	}
	if len(z.res) != 2 {
		if cap(z.res) >= 2 {
			z.res = z.res[:2]
		} else {
			z.res = append(z.res[:0], PairingResult{}, PairingResult{})
		}
	}
	for t := range 2 {
		s := &z.slots[t]
		s.pairs, s.lambdas = resizeInts(s.pairs, 2), resizeFloats(s.lambdas, 2)
	}
}

// result2 is the part of a PairingResult that judge2 computes.
type result2 struct {
	ni, rgaNum, score float64
	verdict           Verdict
}

// store2 makes *r the brief result p with its slices in slot (and its RDG
// when withRDG), as screener.detail stores it, storing only the pointers
// not already there.
func store2(r *PairingResult, slot *resultSlot, p *result2, withRDG bool) {
	if !sameHeader(r.Pairs, slot.pairs) {
		r.Pairs = slot.pairs
	}
	if !sameHeader(r.Lambdas, slot.lambdas) {
		r.Lambdas = slot.lambdas
	}
	if r.Label != "" {
		r.Label = ""
	}
	if r.Reasons != nil {
		r.Reasons = nil
	}
	if r.Integrity != nil {
		r.Integrity = nil
	}
	var rdg *mat.Dense
	if withRDG {
		rdg = &slot.rdg
	}
	if r.RDG != rdg {
		r.RDG = rdg
	}
	r.Niederlinski, r.RGANumber, r.Verdict, r.Score = p.ni, p.rgaNum, p.verdict, p.score
}

// judge2 is screener.detail (brief) of a 2x2 pairing with paired relative
// gains la, lb and gains ka, kb, the same operations in the same order:
// sumAbs is Σ|λ_ij|, sdet is det K with the pairing's sign, rdgHigh counts
// its relative disturbance gains above RDGHigh and noted says whether the
// analysis has notes.
func judge2(th *Thresholds, la, lb, ka, kb, sumAbs, sdet float64, rdgHigh int, noted bool) (p result2) {
	nRejects, nCautions := 0, rdgHigh
	switch {
	case ka == 0 || la <= 0:
		nRejects++
	case la < th.LambdaLow || la > th.LambdaHigh:
		nCautions++
	}
	switch {
	case kb == 0 || lb <= 0:
		nRejects++
	case lb < th.LambdaLow || lb > th.LambdaHigh:
		nCautions++
	}
	allGood := la >= th.GoodLow && la <= th.GoodHigh && lb >= th.GoodLow && lb <= th.GoodHigh
	rgaNum := sumAbs + (math.Abs(la-1) - math.Abs(la))
	rgaNum += math.Abs(lb-1) - math.Abs(lb)
	ni := math.NaN()
	if prod := ka * kb; prod != 0 {
		ni = sdet / prod
	}
	p.ni, p.rgaNum = ni, rgaNum
	p.score = rgaNum + 2*float64(nCautions)
	switch {
	case nRejects > 0:
		p.verdict = Rejected
	case nCautions > 0 || noted:
		p.verdict = Cautioned
	case allGood:
		p.verdict = Recommended
	default:
		p.verdict = Acceptable
	}
	return p
}

// sameHeader reports whether x and y are the same slice: the same first
// element (or both nil), length and capacity. Storing a slice that is
// already in place is skipped this way, sparing the pointer store and its
// write barrier.
func sameHeader[T any](x, y []T) bool {
	return unsafe.SliceData(x) == unsafe.SliceData(y) && len(x) == len(y) && cap(x) == cap(y)
}

// setString stores s in *dst unless *dst is s already (the same bytes in
// the same place).
func setString(dst *string, s string) {
	if unsafe.StringData(*dst) != unsafe.StringData(s) || len(*dst) != len(s) {
		*dst = s
	}
}

// setSlice stores s in *dst unless it is there already (see sameHeader).
func setSlice[T any](dst *[]T, s []T) {
	if !sameHeader(*dst, s) {
		*dst = s
	}
}

// rdg2 stores the relative disturbance gains of the 2x2 pairing (j0, j1) in
// slot.rdg as rdgInto computes them, from z.kinvD = K⁻¹Kd, and returns how
// many exceed RDGHigh.
func (z *Analyzer) rdg2(slot *resultSlot, j0, j1, nd int) int {
	reshape(&slot.rdg, 2, nd)
	out, kd, x, kr := slot.rdg.RawMatrix(), z.a.Kd.RawMatrix(), z.kinvD.RawMatrix(), z.k.RawMatrix()
	kp := [2]float64{kr.Data[j0], kr.Data[kr.Stride+j1]}
	jp := [2]int{j0, j1}
	count := 0
	for d := 0; d < nd; d++ {
		g0, g1 := kd.Data[d], kd.Data[kd.Stride+d]
		big := math.Max(math.Max(0, math.Abs(g0)), math.Abs(g1))
		for i, g := range [2]float64{g0, g1} {
			b := math.NaN()
			if big != 0 && !(math.Abs(g) <= 1e-9*big) {
				b = kp[i] * x.Data[jp[i]*x.Stride+d] / g
				if math.Abs(b) > z.th.RDGHigh {
					count++
				}
			}
			out.Data[i*out.Stride+d] = b
		}
	}
	return count
}
