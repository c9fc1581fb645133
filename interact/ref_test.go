package interact

// The analysis as it was before the Analyzer (commit 82b75b0), kept as the
// reference the tests compare the Analyzer with bit for bit: gonum's mat.LU
// and mat.SVD everywhere, fresh storage for everything.

import (
	"fmt"
	"math"
	"slices"
	"strings"

	"gonum.org/v1/gonum/mat"
)

type refScreener struct {
	a      *Analysis
	th     Thresholds
	n      int
	det    float64
	sumAbs float64    // Σ|λ_ij|
	kinvKd *mat.Dense // K⁻¹Kd, nil without disturbances
	words  bool       // build reasons and labels (not Options.Brief)
	outN   []string
	inN    []string
	distN  []string
}

// Analyze scales the gains, cuts a non-square set to a square one, computes
// the interaction measures of K and screens and ranks the pairings as the
// package documentation describes. It returns an error naming the problem
// when a scaling lacks data, the gain set is empty, or K is singular.
func refAnalyze(g *GainSet, opts *Options) (*Analysis, error) {
	if opts == nil {
		opts = &Options{}
	}
	th := opts.Thresholds.withDefaults()
	if len(g.Outputs) == 0 || len(g.Inputs) == 0 {
		return nil, fmt.Errorf("interact: the gain set from %s has %d outputs and %d inputs: need at least one of each", sourceName(g), len(g.Outputs), len(g.Inputs))
	}
	k, kd, err := g.Scaled(opts.Scaling)
	if err != nil {
		return nil, err
	}
	for i := range g.Outputs {
		for j := range g.Inputs {
			if v := k.At(i, j); isInfOrNaN(v) {
				return nil, fmt.Errorf("interact: gain %s/%s is %v: every gain must be a finite number", g.Outputs[i].Name, g.Inputs[j].Name, v)
			}
		}
	}
	a := &Analysis{Source: g.Source, Scaling: opts.Scaling, Caution: Caution}
	rows, cols := seq(len(g.Outputs)), seq(len(g.Inputs))
	if len(rows) != len(cols) {
		sel, err := selectSquare(g, k)
		if err != nil {
			return nil, err
		}
		a.Selection = sel
		if sel.Outputs {
			rows = slices.Sorted(slices.Values(sel.Kept))
		} else {
			cols = slices.Sorted(slices.Values(sel.Kept))
		}
	}
	a.OutputIndex, a.InputIndex = rows, cols
	for _, i := range rows {
		a.Outputs = append(a.Outputs, g.Outputs[i])
	}
	for _, j := range cols {
		a.Inputs = append(a.Inputs, g.Inputs[j])
	}
	a.Disturbances = g.Disturbances
	a.K = pick(k, rows, cols)
	if kd != nil {
		a.Kd = pick(kd, rows, seq(len(g.Disturbances)))
	}
	n := len(rows)

	// One LU of K gives the RGA, det K and (with disturbances) K⁻¹Kd; one
	// SVD gives the singular values and the singularity test of the
	// minimised condition number.
	a.RGA = new(mat.Dense)
	var kinv mat.Dense
	det, err := refRgaDet(a.RGA, &kinv, a.K)
	if err != nil {
		return nil, &SingularError{What: "the gain matrix K (" + strings.Join(names(a.Outputs), ", ") + " by " + strings.Join(names(a.Inputs), ", ") + ")", Cond: float64(asCondition(err))}
	}
	zeroRoundoff(a.RGA)
	a.Sensitivity = ElementSensitivity(a.RGA)
	a.Det = det
	if a.SVD, err = SVD(a.K); err != nil {
		return nil, err
	}
	if a.MinCond, a.Dl, a.Dr, err = refMinConditionNumber(a.K, a.SVD); err != nil {
		return nil, err
	}
	if a.MinCond > th.CondHigh {
		a.Notes = append(a.Notes, fmt.Sprintf("K is ill-conditioned whatever the scaling: minimised condition number γ* = %s > %s. Some output combinations need input moves %s times larger than others, and the pairing conclusions are sensitive to errors in the gains.", fmtNum(a.MinCond), fmtNum(th.CondHigh), fmtNum(a.MinCond)))
	}

	sc := newRefScreener(a, th, &kinv, opts.Brief)
	maxOut := opts.MaxPairings
	if maxOut == 0 {
		maxOut = 10
	}
	var cands []candidate
	if n <= MaxEnumerate {
		if !opts.Brief {
			a.Method = fmt.Sprintf("all %d pairings enumerated", factorial(n))
		}
		for p := range Pairings(n) {
			cands = append(cands, sc.screen(p))
		}
	} else {
		kbest := maxOut
		if kbest < 0 {
			kbest = 1000
		}
		kbest = max(4*kbest, 50)
		cost := mat.NewDense(n, n, nil)
		for i := 0; i < n; i++ {
			for j := 0; j < n; j++ {
				l := a.RGA.At(i, j)
				cost.Set(i, j, math.Abs(l-1)-math.Abs(l))
			}
		}
		best := BestPairings(cost, kbest)
		if !opts.Brief {
			a.Method = fmt.Sprintf("%d! pairings are too many to enumerate: screened the %d best by the RGA number (Murty's ranking of assignments), then applied the other screens to those", n, len(best))
		}
		for _, p := range best {
			cands = append(cands, sc.screen(p))
		}
	}
	a.Screened = len(cands)
	for _, c := range cands {
		if c.rejected {
			a.Rejected++
		}
	}
	slices.SortFunc(cands, func(x, y candidate) int { return x.compare(y) })
	if maxOut < 0 || maxOut > len(cands) {
		maxOut = len(cands)
	}
	// Details (integrity above all) cost far more than the screen, and only
	// add penalties: evaluate in screen order and stop once the next
	// candidate cannot beat the maxOut-th result.
	var res []PairingResult
	for _, c := range cands {
		if len(res) >= maxOut {
			last := res[maxOut-1]
			if (candidate{p: c.p, rejected: c.rejected, score: c.score}).compare(candidate{p: last.Pairs, rejected: last.Verdict == Rejected, score: last.Score}) > 0 {
				break
			}
		}
		res = append(res, sc.detail(c.p))
		slices.SortFunc(res, compareResults)
	}
	a.Pairings = res[:min(maxOut, len(res))]
	return a, nil
}

// screen computes the cheap part: rejection and a lower bound of the score
// (everything but integrity), O(n·(1+nd)) per pairing.
func (s *refScreener) screen(p Pairing) candidate {
	c := candidate{p: slices.Clone(p)}
	rgaNum := s.sumAbs
	cautions := 0
	for i, j := range p {
		l := s.a.RGA.At(i, j)
		rgaNum += math.Abs(l-1) - math.Abs(l)
		switch {
		case l <= 0 || s.a.K.At(i, j) == 0:
			c.rejected = true
		case l < s.th.LambdaLow || l > s.th.LambdaHigh:
			cautions++
		}
	}
	ni := niederlinski(s.a.K, p, s.det)
	if s.n >= 3 {
		if ni < 0 || math.IsNaN(ni) {
			c.rejected = true
		} else if ni < s.th.NISmall {
			cautions++
		}
	}
	if s.kinvKd != nil {
		cautions += s.rdgCautions(rdgFrom(s.a.K, s.a.Kd, s.kinvKd, p))
	}
	c.score = rgaNum + 2*float64(cautions)
	return c
}

func (s *refScreener) rdgCautions(b *mat.Dense) int {
	n := 0
	for _, v := range b.RawMatrix().Data {
		if math.Abs(v) > s.th.RDGHigh {
			n++
		}
	}
	return n
}

// detail builds the full result with integrity, and with reasons and label
// unless the analysis is brief. The verdict and score count the rejections
// and cautions, so they do not depend on the words.
func (s *refScreener) detail(p Pairing) PairingResult {
	a, th, words := s.a, s.th, s.words
	r := PairingResult{Pairs: slices.Clone(p), Lambdas: make([]float64, s.n)}
	if words {
		r.Label = p.Label(s.outN, s.inN)
	}
	var rejects, cautions, good []string
	nRejects, nCautions := 0, 0
	allGood := true
	for i, j := range p {
		l := a.RGA.At(i, j)
		r.Lambdas[i] = l
		var pair string
		if words {
			pair = fmt.Sprintf("%s paired with %s", s.outN[i], s.inN[j])
		}
		switch {
		case a.K.At(i, j) == 0:
			nRejects++
			if words {
				rejects = append(rejects, fmt.Sprintf("%s: the steady-state gain is zero, so this input cannot hold this output.", pair))
			}
		case l == 0:
			nRejects++
			if words {
				rejects = append(rejects, fmt.Sprintf("%s has λ = 0 (to rounding): the input's effect on this output vanishes once the other loops close, so this pair cannot form a loop.", pair))
			}
		case l < 0:
			nRejects++
			if words {
				rejects = append(rejects, fmt.Sprintf("%s has λ = %s < 0: the loop's gain changes sign when the other loops close, so a controller tuned with them open drives it the wrong way.", pair, fmtNum(l)))
			}
		case l < th.LambdaLow:
			nCautions++
			if words {
				cautions = append(cautions, fmt.Sprintf("%s has λ = %s < %s: the loop's gain grows about %s times when the other loops close; interaction is strong and the loop needs detuning.", pair, fmtNum(l), fmtNum(th.LambdaLow), fmtNum(1/l)))
			}
		case l > th.LambdaHigh:
			nCautions++
			if words {
				cautions = append(cautions, fmt.Sprintf("%s has λ = %s > %s: the loop's gain falls to 1/%s of its open-loop value when the other loops close, and an error of 1/λ = %s%% in this gain alone would make K singular.", pair, fmtNum(l), fmtNum(th.LambdaHigh), fmtNum(l), fmtNum(100/l)))
			}
		}
		inBand := l >= th.LambdaLow && l <= th.LambdaHigh && a.K.At(i, j) != 0
		switch {
		case l >= th.GoodLow && l <= th.GoodHigh:
			if words {
				good = append(good, fmt.Sprintf("%s has λ = %s, close to 1.", pair, fmtNum(l)))
			}
		case inBand && l < 1:
			allGood = false
			if words {
				good = append(good, fmt.Sprintf("%s has λ = %s: acceptable, but the loop's gain grows about %s times when the other loops close; tune it with them closed.", pair, fmtNum(l), fmtNum(1/l)))
			}
		case inBand:
			allGood = false
			if words {
				good = append(good, fmt.Sprintf("%s has λ = %s: acceptable, but the loop's gain falls to 1/%s of its open-loop value when the other loops close; tune it with them closed.", pair, fmtNum(l), fmtNum(l)))
			}
		default:
			allGood = false
		}
	}
	r.RGANumber = s.sumAbs
	for i, j := range p {
		l := a.RGA.At(i, j)
		r.RGANumber += math.Abs(l-1) - math.Abs(l)
	}
	r.Niederlinski = niederlinski(a.K, p, s.det)
	if s.n >= 3 {
		switch {
		case math.IsNaN(r.Niederlinski):
			// a zero paired gain, already rejected above
		case r.Niederlinski < 0:
			nRejects++
			if words {
				rejects = append(rejects, fmt.Sprintf("Niederlinski index NI = %s < 0: with integral action in every loop the closed loop is unstable whatever the tuning.", fmtNum(r.Niederlinski)))
			}
		case r.Niederlinski < th.NISmall:
			nCautions++
			if words {
				cautions = append(cautions, fmt.Sprintf("Niederlinski index NI = %s is positive but below %s: the paired gains explain little of det K, and a modest gain error could flip NI negative.", fmtNum(r.Niederlinski), fmtNum(th.NISmall)))
			}
		}
	}
	if a.Kd != nil {
		r.RDG = rdgFrom(a.K, a.Kd, s.kinvKd, p)
		nd := len(s.distN)
		for i := 0; i < s.n; i++ {
			for d := 0; d < nd; d++ {
				if b := r.RDG.At(i, d); math.Abs(b) > th.RDGHigh {
					nCautions++
					if words {
						cautions = append(cautions, fmt.Sprintf("Disturbance %s: relative disturbance gain β = %s on %s (|β| > %s): with the other loops closed its effect on %s is %s times the open-loop effect, so that loop must reject much more than its open-loop gain suggests.", s.distN[d], fmtNum(b), s.outN[i], fmtNum(th.RDGHigh), s.outN[i], fmtNum(math.Abs(b))))
					}
				}
			}
		}
	}
	if nRejects == 0 && s.n >= 3 {
		for _, chk := range refIntegrity(a.K, p) {
			if chk.Fails {
				r.Integrity = append(r.Integrity, chk)
			}
		}
		if len(r.Integrity) > 0 {
			nCautions++
			if words {
				cautions = append(cautions, s.integrityReason(p, r.Integrity))
			}
		}
	}
	r.Score = r.RGANumber + 2*float64(nCautions)
	switch {
	case nRejects > 0:
		r.Verdict = Rejected
	case nCautions > 0 || len(a.Notes) > 0:
		r.Verdict = Cautioned
	case allGood:
		r.Verdict = Recommended
	default:
		r.Verdict = Acceptable
	}
	if !words {
		return r
	}
	r.Reasons = append(append(append(rejects, cautions...), a.Notes...), good...)
	if s.n >= 3 && r.Niederlinski > 0 && len(rejects) == 0 {
		r.Reasons = append(r.Reasons, fmt.Sprintf("Niederlinski index NI = %s > 0.", fmtNum(r.Niederlinski)))
	}
	if s.n >= 3 && len(rejects) == 0 && len(r.Integrity) == 0 {
		r.Reasons = append(r.Reasons, "Integrity holds: every set of loops left in automatic keeps NI > 0 and positive paired λ.")
	}
	return r
}

func (s *refScreener) integrityReason(p Pairing, fails []SubsystemCheck) string {
	const show = 3
	var parts []string
	for _, f := range fails[:min(show, len(fails))] {
		manual := f.Manual(s.n)
		mn := make([]string, len(manual))
		for k, i := range manual {
			mn[k] = s.outN[i]
		}
		var why string
		switch {
		case f.NI == 0 || math.IsNaN(f.NI):
			why = "their paired gain matrix is singular"
		case f.NI < 0:
			why = fmt.Sprintf("NI = %s < 0", fmtNum(f.NI))
		default:
			for k, l := range f.Lambdas {
				if l < 0 {
					why = fmt.Sprintf("%s has λ = %s < 0", s.outN[f.Auto[k]], fmtNum(l))
					break
				}
			}
		}
		auto := make([]string, len(f.Auto))
		for k, i := range f.Auto {
			auto[k] = s.outN[i] + "-" + s.inN[p[i]]
		}
		parts = append(parts, fmt.Sprintf("with %s in manual, the loops %s left in automatic fail: %s", strings.Join(mn, ", "), strings.Join(auto, ", "), why))
	}
	msg := "Integrity: " + strings.Join(parts, "; ")
	if len(fails) > show {
		msg += fmt.Sprintf("; and %d more subsets", len(fails)-show)
	}
	return msg + ". Such a set of loops goes unstable under integral action when the others are switched to manual."
}

// newRefScreener takes kinv = K⁻¹, which Analyze has at hand.
func newRefScreener(a *Analysis, th Thresholds, kinv *mat.Dense, brief bool) *refScreener {
	n, _ := a.K.Dims()
	s := &refScreener{a: a, th: th, n: n, det: a.Det, words: !brief, outN: names(a.Outputs), inN: names(a.Inputs), distN: names(a.Disturbances)}
	for _, v := range a.RGA.RawMatrix().Data {
		s.sumAbs += math.Abs(v)
	}
	if a.Kd != nil {
		s.kinvKd = new(mat.Dense)
		s.kinvKd.Mul(kinv, a.Kd)
	}
	return s
}

// rgaDet is RGA that also returns det k and leaves K⁻¹ in inv, all from one
// LU factorisation (det is NaN and inv unset when k is exactly singular).
func refRgaDet(dst, inv *mat.Dense, k mat.Matrix) (det float64, err error) {
	r, c := k.Dims()
	reuseAs(dst, r, c)
	cond, det := refInverseDet(inv, k)
	if math.IsInf(cond, 1) {
		for i := 0; i < r; i++ {
			for j := 0; j < c; j++ {
				dst.Set(i, j, math.NaN())
			}
		}
		return det, mat.Condition(cond)
	}
	dst.MulElem(k, inv.T())
	if cond > ConditionLimit {
		return det, mat.Condition(cond)
	}
	return det, nil
}

// minConditionNumber is MinConditionNumber given the SVD s of kd (only
// read).
func refMinConditionNumber(kd *mat.Dense, s *SVDResult) (gamma float64, dl, dr []float64, err error) {
	n, _ := kd.Dims()
	if s.Values[n-1] == 0 || s.Cond > 1/0x1p-52 {
		return 0, nil, nil, &SingularError{What: "K", Cond: s.Cond}
	}
	if n == 1 {
		return 1, []float64{1}, []float64{1}, nil
	}
	if n == 2 {
		if g, dl, dr, ok := refMinCond2(kd); ok {
			return g, dl, dr, nil
		}
	}
	return refMinCondNumeric(kd)
}

// minCond2 is the 2x2 case in closed form. With every gain non-zero, the
// scalings that make |m11| = |m22| and |m12| = |m21| in M = Dl K Dr attain
// γ*: the objective is convex in the log-scalings and symmetric about that
// point. Its value agrees with Grosdidier, Morari & Holt (1985),
// γ* = ||Λ||_i1 + sqrt(||Λ||_i1² - 1) (Skogestad & Postlethwaite eq. A.70),
// which the tests check against the numerical minimisation. A zero gain
// (triangular K) has no such point and is left to the numerical method.
func refMinCond2(k *mat.Dense) (gamma float64, dl, dr []float64, ok bool) {
	a, b, c, d := math.Abs(k.At(0, 0)), math.Abs(k.At(0, 1)), math.Abs(k.At(1, 0)), math.Abs(k.At(1, 1))
	if a == 0 || b == 0 || c == 0 || d == 0 {
		return 0, nil, nil, false
	}
	// M = diag(1, q) K diag(1, s): |m11/m22| = |a/(q s d)| = 1 and
	// |m12/m21| = |s b/(q c)| = 1.
	s := math.Sqrt(a * c / (b * d))
	q := a / (s * d)
	// Geometric mean 1, as the numerical method returns them.
	gq, gs := math.Sqrt(q), math.Sqrt(s)
	dl, dr = []float64{1 / gq, q / gq}, []float64{1 / gs, s / gs}
	m := mat.NewDense(2, 2, nil)
	for i := 0; i < 2; i++ {
		for j := 0; j < 2; j++ {
			m.Set(i, j, dl[i]*k.At(i, j)*dr[j])
		}
	}
	var svd mat.SVD
	if !svd.Factorize(m, mat.SVDNone) {
		return 0, nil, nil, false
	}
	v := svd.Values(nil)
	if v[1] == 0 {
		return 0, nil, nil, false
	}
	return v[0] / v[1], dl, dr, true
}

// minCondNumeric minimises γ(Dl K Dr) numerically for a non-singular K of
// size n >= 2.
func refMinCondNumeric(kd *mat.Dense) (gamma float64, dl, dr []float64, err error) {
	n, _ := kd.Dims()
	// Variables: a_1..a_{n-1}, b_1..b_{n-1}; a_0 = b_0 = 0 fix the two
	// free common factors.
	a0, b0 := equilibrate(kd)
	x0 := make([]float64, 2*(n-1))
	for i := 1; i < n; i++ {
		x0[i-1] = a0[i] - a0[0]
		x0[n-1+i-1] = b0[i] - b0[0]
	}
	m := mat.NewDense(n, n, nil)
	var svd mat.SVD
	var u, v mat.Dense
	eval := func(x []float64, wantGrad bool, grad []float64) float64 {
		for i := 0; i < n; i++ {
			ea := 1.0
			if i > 0 {
				ea = math.Exp(x[i-1])
			}
			for j := 0; j < n; j++ {
				eb := 1.0
				if j > 0 {
					eb = math.Exp(x[n-1+j-1])
				}
				m.Set(i, j, ea*kd.At(i, j)*eb)
			}
		}
		kind := mat.SVDNone
		if wantGrad {
			kind = mat.SVDThin
		}
		if !svd.Factorize(m, kind) {
			return math.Inf(1)
		}
		s := svd.Values(nil)
		if s[n-1] == 0 {
			return math.Inf(1)
		}
		if wantGrad {
			svd.UTo(&u)
			svd.VTo(&v)
			for i := 1; i < n; i++ {
				grad[i-1] = u.At(i, 0)*u.At(i, 0) - u.At(i, n-1)*u.At(i, n-1)
				grad[n-1+i-1] = v.At(i, 0)*v.At(i, 0) - v.At(i, n-1)*v.At(i, n-1)
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

// Integrity checks every set of two or more loops that can remain in
// automatic while the others are in manual: for each proper subset S of the
// outputs with |S| >= 2 it takes the paired sub-matrix K[S, p(S)] and
// computes its Niederlinski index and the paired elements of its RGA. A
// subset fails when NI <= 0 or a paired λ < 0: with integral action the loops
// left in automatic would go unstable, or a loop's gain would change sign,
// when the others are opened (Skogestad & Postlethwaite eq. 10.58, Remark 6
// p. 448, and Theorem 10.4). The full set is not repeated here: its NI and λ
// are the pairing's own. Results are ordered by decreasing subset size (one
// loop in manual first), then lexicographically. For n loops there are
// 2ⁿ - n - 2 subsets. Integrity panics if k is not square or p not a
// permutation of its size.
func refIntegrity(k mat.Matrix, p Pairing) []SubsystemCheck {
	n, c := k.Dims()
	if n != c {
		panic(mat.ErrSquare)
	}
	p.mustBePermutation(n)
	var out []SubsystemCheck
	for size := n - 1; size >= 2; size-- {
		forSubsets(n, size, func(s []int) {
			out = append(out, refCheckSubsystem(k, p, s))
		})
	}
	return out
}

func refCheckSubsystem(k mat.Matrix, p Pairing, s []int) SubsystemCheck {
	m := len(s)
	sub := mat.NewDense(m, m, nil)
	prod := 1.0
	for a, i := range s {
		for b, j := range s {
			sub.Set(a, b, k.At(i, p[j]))
		}
		prod *= k.At(i, p[i])
	}
	res := SubsystemCheck{Auto: append([]int(nil), s...), Lambdas: make([]float64, m)}
	var lu mat.LU
	lu.Factorize(sub)
	det, cond := lu.Det(), lu.Cond()
	var inv mat.Dense
	if cond <= ConditionLimit {
		id := mat.NewDiagDense(m, nil)
		for a := 0; a < m; a++ {
			id.SetDiag(a, 1)
		}
		_ = lu.SolveTo(&inv, false, id) // cond is checked above
	}
	if !(cond <= ConditionLimit) {
		res.NI = 0
		for a := range res.Lambdas {
			res.Lambdas[a] = math.NaN()
		}
		res.Fails = true
		return res
	}
	res.NI = det / prod
	if prod == 0 {
		res.NI = math.NaN()
	}
	for a := range s {
		res.Lambdas[a] = sub.At(a, a) * inv.At(a, a)
		if res.Lambdas[a] < 0 {
			res.Fails = true
		}
	}
	if !(res.NI > 0) {
		res.Fails = true
	}
	return res
}
