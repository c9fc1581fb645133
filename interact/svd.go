package interact

import (
	"math"

	"gonum.org/v1/gonum/mat"
)

// SVDResult is the singular value decomposition K = U Σ Vᵀ of a gain matrix.
type SVDResult struct {
	Values []float64  // singular values σ_1 >= σ_2 >= ... >= 0
	U      *mat.Dense // output directions: column i goes with Values[i]
	V      *mat.Dense // input directions: column i goes with Values[i]
	Cond   float64    // σ_1/σ_min, +Inf when the smallest value is zero
}

// SVD returns the thin singular value decomposition of k. The input direction
// V[:,0] moves the outputs most per unit input (gain σ_1, in the output
// direction U[:,0]); V[:,last] least. The signs of each (U[:,i], V[:,i]) pair
// are not unique.
func SVD(k mat.Matrix) (*SVDResult, error) {
	var svd mat.SVD
	if !svd.Factorize(k, mat.SVDThin) {
		return nil, errSVD
	}
	r := &SVDResult{Values: svd.Values(nil), U: new(mat.Dense), V: new(mat.Dense)}
	svd.UTo(r.U)
	svd.VTo(r.V)
	if len(r.Values) > 0 {
		r.Cond = r.Values[0] / r.Values[len(r.Values)-1]
	}
	return r, nil
}

// MinConditionNumber returns the condition number of the square k minimised
// over diagonal input and output scalings,
//
//	γ*(K) = min over diagonal Dl, Dr of γ(Dl K Dr),
//
// with the scalings that attain it (the minimum is unique only up to a
// common factor; Dl and Dr are returned with geometric mean 1). γ* does not
// depend on how the gains were scaled, so a large γ* means the plant itself
// is close to singular, not merely badly scaled.
//
// Braatz & Morari (1994) showed √γ* = min_D σ̄(D H D⁻¹) with
// H = [0 K⁻¹; K 0] (Skogestad & Postlethwaite eq. A.72-A.73); minimising that
// over the common factor of D leaves exactly √γ(Dl K Dr). σ̄(e^Δ H e^-Δ) is
// convex in the log-scalings Δ (Sezginer & Overton 1990) and so, as its
// partial minimum, is √γ(e^a K e^b) in (a, b): any local minimum is global.
// MinConditionNumber minimises log γ(e^a K e^b) by BFGS with the analytic
// gradient (∂log σ_1/∂a_i = U_i1², ∂log σ_n/∂a_i = U_in², likewise V for b)
// from an equilibrated start, then polishes with Nelder-Mead, because the
// minimum can sit where singular values coincide and the gradient is not
// smooth. It returns a SingularError when k is singular and panics if k is
// not square.
func MinConditionNumber(k mat.Matrix) (gamma float64, dl, dr []float64, err error) {
	n, c := k.Dims()
	if n != c {
		panic(mat.ErrSquare)
	}
	kd := mat.DenseCopyOf(k)
	s, err := SVD(kd)
	if err != nil {
		return 0, nil, nil, err
	}
	return minConditionNumber(kd, s)
}

// minConditionNumber is MinConditionNumber given the SVD s of kd (only
// read).
func minConditionNumber(kd *mat.Dense, s *SVDResult) (gamma float64, dl, dr []float64, err error) {
	var w minWork
	if gamma, err = minCondInto(kd, s, &dl, &dr, &w); err != nil {
		return 0, nil, nil, err
	}
	return gamma, dl, dr, nil
}

// minWork is the reusable storage of the minimisation.
type minWork struct {
	none, thin svdWork
	m          mat.Dense
}

// minCondInto is minConditionNumber storing the scalings in *dl and *dr
// (reusing their storage) and working in w.
func minCondInto(kd *mat.Dense, s *SVDResult, dl, dr *[]float64, w *minWork) (gamma float64, err error) {
	n, _ := kd.Dims()
	if s.Values[n-1] == 0 || s.Cond > 1/0x1p-52 {
		return 0, &SingularError{What: "K", Cond: s.Cond}
	}
	*dl, *dr = resizeFloats(*dl, n), resizeFloats(*dr, n)
	if n == 1 {
		(*dl)[0], (*dr)[0] = 1, 1
		return 1, nil
	}
	if n == 2 {
		if g, ok := minCond2(kd, *dl, *dr); ok {
			return g, nil
		}
	}
	g, l, r, err := minCondNumeric(kd, w)
	copy(*dl, l)
	copy(*dr, r)
	return g, err
}

// minCond2 is the 2x2 case in closed form, the scalings stored in dl and dr.
// With every gain non-zero, the scalings that make |m11| = |m22| and
// |m12| = |m21| in M = Dl K Dr attain γ*: the objective is convex in the
// log-scalings and symmetric about that point. Its value agrees with
// Grosdidier, Morari & Holt (1985), γ* = ||Λ||_i1 + sqrt(||Λ||_i1² - 1)
// (Skogestad & Postlethwaite eq. A.70), which the tests check against the
// numerical minimisation; it is computed as σ1/σ2 of M (condNone2, the
// arithmetic of gonum's SVD of a 2x2 written out), which unlike the formula
// keeps full relative accuracy when γ* is close to 1. A zero gain
// (triangular K) has no such point and is left to the numerical method.
func minCond2(k *mat.Dense, dl, dr []float64) (gamma float64, ok bool) {
	a, b, c, d := math.Abs(k.At(0, 0)), math.Abs(k.At(0, 1)), math.Abs(k.At(1, 0)), math.Abs(k.At(1, 1))
	if a == 0 || b == 0 || c == 0 || d == 0 {
		return 0, false
	}
	// M = diag(1, q) K diag(1, s): |m11/m22| = |a/(q s d)| = 1 and
	// |m12/m21| = |s b/(q c)| = 1.
	s := math.Sqrt(a * c / (b * d))
	q := a / (s * d)
	// Geometric mean 1, as the numerical method returns them.
	gq, gs := math.Sqrt(q), math.Sqrt(s)
	dl[0], dl[1] = 1/gq, q/gq
	dr[0], dr[1] = 1/gs, s/gs
	var m [2][2]float64
	for i := 0; i < 2; i++ {
		for j := 0; j < 2; j++ {
			m[i][j] = dl[i] * k.At(i, j) * dr[j]
		}
	}
	ssmin, ssmax, ok := condNone2(m[0][0], m[0][1], m[1][0], m[1][1])
	if !ok {
		var svd mat.SVD
		if !svd.Factorize(mat.NewDense(2, 2, []float64{m[0][0], m[0][1], m[1][0], m[1][1]}), mat.SVDNone) {
			return 0, false
		}
		v := svd.Values(nil)
		ssmax, ssmin = v[0], v[1]
	}
	if ssmin == 0 {
		return 0, false
	}
	return ssmax / ssmin, true
}

// minCondNumeric minimises γ(Dl K Dr) numerically for a non-singular K of
// size n >= 2, its SVDs in w's storage.
func minCondNumeric(kd *mat.Dense, w *minWork) (gamma float64, dl, dr []float64, err error) {
	n, _ := kd.Dims()
	// Variables: a_1..a_{n-1}, b_1..b_{n-1}; a_0 = b_0 = 0 fix the two
	// free common factors.
	a0, b0 := equilibrate(kd)
	x0 := make([]float64, 2*(n-1))
	for i := 1; i < n; i++ {
		x0[i-1] = a0[i] - a0[0]
		x0[n-1+i-1] = b0[i] - b0[0]
	}
	reshape(&w.m, n, n)
	m := &w.m
	eb := make([]float64, n)
	eval := func(x []float64, wantGrad bool, grad []float64) float64 {
		eb[0] = 1
		for j := 1; j < n; j++ {
			eb[j] = math.Exp(x[n-1+j-1])
		}
		for i := 0; i < n; i++ {
			ea := 1.0
			if i > 0 {
				ea = math.Exp(x[i-1])
			}
			for j := 0; j < n; j++ {
				m.Set(i, j, ea*kd.At(i, j)*eb[j])
			}
		}
		sw := &w.none
		if wantGrad {
			sw = &w.thin
		}
		if !sw.factorize(m, wantGrad) {
			return math.Inf(1)
		}
		s := sw.s
		if s[n-1] == 0 {
			return math.Inf(1)
		}
		if wantGrad {
			// U is n×n with stride n; Vᵀ likewise, so V[i][j] = vt[j*n+i].
			u, vt := sw.u, sw.vt
			for i := 1; i < n; i++ {
				grad[i-1] = u[i*n]*u[i*n] - u[i*n+n-1]*u[i*n+n-1]
				grad[n-1+i-1] = vt[i]*vt[i] - vt[(n-1)*n+i]*vt[(n-1)*n+i]
			}
		}
		return math.Log(s[0] / s[n-1])
	}
	fg := func(x, grad []float64) float64 { return eval(x, true, grad) }
	f := func(x []float64) float64 { return eval(x, false, nil) }
	best, bestF := bfgs(fg, x0, 500)
	// A small gradient means BFGS reached a smooth minimum. Otherwise the
	// minimum sits on a kink (coinciding singular values): polish with the
	// derivative-free simplex, then let BFGS finish from there.
	grad := make([]float64, len(x0))
	eval(best, true, grad)
	if norm(grad) > 1e-7 {
		best, bestF = nelderMead(f, best, 0.05, 500*len(x0))
		if x, fx := bfgs(fg, best, 200); fx < bestF {
			best, bestF = x, fx
		}
	}

	dl, dr = make([]float64, n), make([]float64, n)
	dl[0], dr[0] = 1, 1
	var sa, sb float64
	for i := 1; i < n; i++ {
		sa += best[i-1]
		sb += best[n-1+i-1]
	}
	for i := 0; i < n; i++ {
		ea, eb := 0.0, 0.0
		if i > 0 {
			ea, eb = best[i-1], best[n-1+i-1]
		}
		dl[i] = math.Exp(ea - sa/float64(n))
		dr[i] = math.Exp(eb - sb/float64(n))
	}
	return math.Exp(bestF), dl, dr, nil
}

// equilibrate returns log-scalings a, b that make the rows and columns of
// e^a |K| e^b have roughly equal 2-norms (a few alternating sweeps), a good
// start for the minimisation.
func equilibrate(k *mat.Dense) (a, b []float64) {
	n, _ := k.Dims()
	a, b = make([]float64, n), make([]float64, n)
	for sweep := 0; sweep < 10; sweep++ {
		for i := 0; i < n; i++ {
			s := 0.0
			for j := 0; j < n; j++ {
				x := k.At(i, j) * math.Exp(a[i]+b[j])
				s += x * x
			}
			if s > 0 {
				a[i] -= 0.5 * math.Log(s)
			}
		}
		for j := 0; j < n; j++ {
			s := 0.0
			for i := 0; i < n; i++ {
				x := k.At(i, j) * math.Exp(a[i]+b[j])
				s += x * x
			}
			if s > 0 {
				b[j] -= 0.5 * math.Log(s)
			}
		}
	}
	return a, b
}
