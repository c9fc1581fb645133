package interact

import (
	"cmp"
	"math"

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
//     (pairings2), with screener.detail's arithmetic.
//   - ∞-norm condition numbers above 1e10, exactly singular K and entries
//     out of in2Range's range take the general path as before, so the
//     singularity decisions and their messages are the general path's.

// matrix2 fills the analysis's RGA, Sensitivity, Det, SVD, MinCond, Dl, Dr,
// notes and z.kinv for the 2x2 K in z.k. It reports false, having set
// nothing the general path does not overwrite, when K needs the general
// path (see above).
func (z *Analyzer) matrix2() (ok bool, err error) {
	a := &z.a
	kr := z.k.RawMatrix()
	k00, k01, k10, k11 := kr.Data[0], kr.Data[1], kr.Data[kr.Stride], kr.Data[kr.Stride+1]
	if !in2Range4(k00, k01, k10, k11) {
		return false, nil
	}
	// inverseDet2's LU and inverse.
	b, a00, u11, swap, _, ok := lu2Inverse(k00, k01, k10, k11)
	if !ok {
		return false, nil
	}
	b00, b01, b10, b11 := b[0], b[1], b[2], b[3]
	det := float64(a00 * u11) // det2's arithmetic
	if swap {
		det = -det
	}
	if !z.shaped2 {
		z.shape2()
	}
	ir := z.kinv.RawMatrix()
	ir.Data[0], ir.Data[1], ir.Data[ir.Stride], ir.Data[ir.Stride+1] = b00, b01, b10, b11

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
	rr := z.rga.RawMatrix()
	rr.Data[0], rr.Data[1], rr.Data[rr.Stride], rr.Data[rr.Stride+1] = l00, l01, l10, l11
	sr := z.sens.RawMatrix()
	sr.Data[0], sr.Data[1], sr.Data[sr.Stride], sr.Data[sr.Stride+1] = 1/l00, 1/l01, 1/l10, 1/l11
	a.RGA, a.Sensitivity, a.Det = &z.rga, &z.sens, det

	// The SVD, as svdInto gives it.
	r := &z.svd
	ud, vd := r.U.RawMatrix(), r.V.RawMatrix()
	if !svd2Of(r.Values, ud.Data[0:2], ud.Data[ud.Stride:ud.Stride+2], vd.Data[0:2], vd.Data[vd.Stride:vd.Stride+2], k00, k01, k10, k11) {
		return false, nil
	}
	r.Cond = r.Values[0] / r.Values[1]
	a.SVD = r
	if r.Values[1] == 0 || r.Cond > 1/0x1p-52 { // as minCondInto; not reached below cond 1e10
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
		z.dl[0], z.dl[1] = 1/gq, q/gq
		z.dr[0], z.dr[1] = 1/gs, s/gs
	} else if gamma, ok = minCond2(&z.k, z.dl, z.dr); !ok {
		if gamma, err = minCondInto(&z.k, r, &z.dl, &z.dr, &z.mw); err != nil {
			return true, err
		}
	}
	a.MinCond, a.Dl, a.Dr = gamma, z.dl, z.dr
	z.noteCondition()
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

// shape2 makes the matrices and slices matrix2 fills 2x2 (2 long), and
// records it in z.shaped2, which the general path clears.
func (z *Analyzer) shape2() {
	r := &z.svd
	if r.U == nil {
		r.U, r.V = new(mat.Dense), new(mat.Dense)
	}
	for _, d := range [...]*mat.Dense{&z.kinv, &z.rga, &z.sens, r.U, r.V} {
		reshape(d, 2, 2)
	}
	r.Values = resizeFloats(r.Values, 2)
	z.dl, z.dr = resizeFloats(z.dl, 2), resizeFloats(z.dr, 2)
	z.shaped2 = true
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

// in2Range4 is in2Range of four numbers.
func in2Range4(a, b, c, d float64) bool {
	return in1Range(a) && in1Range(b) && in1Range(c) && in1Range(d)
}

func in1Range(v float64) bool {
	x := math.Abs(v)
	return x == 0 || (x >= small2 && x <= 1/small2) // false for NaN
}

// pairings2 screens and ranks both pairings of a 2x2 for a brief analysis
// that wants them all, with the numbers, verdicts and order that
// screener.detail and detailAll give (the same operations in the same
// order), without the general bookkeeping.
func (z *Analyzer) pairings2() {
	a := &z.a
	rr, kr := z.rga.RawMatrix(), z.k.RawMatrix()
	l00, l01, l10, l11 := rr.Data[0], rr.Data[1], rr.Data[rr.Stride], rr.Data[rr.Stride+1]
	k00, k01, k10, k11 := kr.Data[0], kr.Data[1], kr.Data[kr.Stride], kr.Data[kr.Stride+1]
	sumAbs := 0 + math.Abs(l00) // as screener.init sums, from +0
	sumAbs += math.Abs(l01)
	sumAbs += math.Abs(l10)
	sumAbs += math.Abs(l11)
	nd := 0
	if a.Kd != nil {
		_, nd = a.Kd.Dims()
		mulInto(&z.kinvD, &z.kinv, a.Kd)
	}
	for len(z.slots) < 2 {
		z.slots = append(z.slots, resultSlot{})
	}
	res := z.res[:0]
	if cap(res) >= 2 {
		res = res[:2]
	} else {
		res = append(res, PairingResult{}, PairingResult{})
	}
	z.pairing2(&res[0], &z.slots[0], 0, l00, l11, k00, k11, sumAbs, a.Det, nd)
	z.pairing2(&res[1], &z.slots[1], 1, l01, l10, k01, k10, sumAbs, -a.Det, nd)
	a.Rejected = 0
	if res[0].Verdict == Rejected {
		a.Rejected++
	}
	if res[1].Verdict == Rejected {
		a.Rejected++
	}
	// compareResults: rejected last, then by score, then by pairing, and
	// (0, 1) comes before (1, 0).
	r0, r1 := &res[0], &res[1]
	if rej0, rej1 := r0.Verdict == Rejected, r1.Verdict == Rejected; rej0 != rej1 {
		if rej0 {
			*r0, *r1 = *r1, *r0
		}
	} else if cmp.Compare(r0.Score, r1.Score) > 0 {
		*r0, *r1 = *r1, *r0
	}
	a.Screened = 2
	z.res = res
	a.Pairings = res
}

// pairing2 is screener.detail (brief) of the 2x2 pairing j0 = t, j1 = 1-t
// with paired relative gains la, lb and gains ka, kb; sdet is det K with
// the pairing's sign.
func (z *Analyzer) pairing2(r *PairingResult, slot *resultSlot, t int, la, lb, ka, kb, sumAbs, sdet float64, nd int) {
	th := &z.th
	slot.pairs = append(slot.pairs[:0], t, 1-t)
	slot.lambdas = append(slot.lambdas[:0], la, lb)
	nRejects, nCautions := 0, 0
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
	// Field by field: storing a whole struct with pointers costs more.
	r.Pairs, r.Lambdas, r.Label, r.Reasons, r.Integrity, r.RDG = slot.pairs, slot.lambdas, "", nil, nil, nil
	r.Niederlinski, r.RGANumber = ni, rgaNum
	if nd > 0 {
		nCautions += z.rdg2(slot, t, 1-t, nd)
		r.RDG = &slot.rdg
	}
	r.Score = rgaNum + 2*float64(nCautions)
	switch {
	case nRejects > 0:
		r.Verdict = Rejected
	case nCautions > 0 || len(z.a.Notes) > 0:
		r.Verdict = Cautioned
	case allGood:
		r.Verdict = Recommended
	default:
		r.Verdict = Acceptable
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
