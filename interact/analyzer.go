package interact

import (
	"cmp"
	"fmt"
	"math"
	"slices"
	"strings"

	"gonum.org/v1/gonum/mat"
)

// Analyze scales the gains, cuts a non-square set to a square one, computes
// the interaction measures of K and screens and ranks the pairings as the
// package documentation describes. It returns an error naming the problem
// when a scaling lacks data, the gain set is empty, or K is singular.
//
// Analyze works on a fresh Analyzer, so the Analysis is the caller's. To
// analyse many gain sets with the same options, use an Analyzer, which
// gives the same numbers without allocating for each one.
func Analyze(g *GainSet, opts *Options) (*Analysis, error) {
	z := NewAnalyzer(opts)
	z.fresh, z.route2 = true, false
	return z.Analyze(g)
}

// Analyzer analyses gain sets one after another with the same options,
// reusing its storage, so that a caller analysing many operating points (an
// envelope sweep) allocates next to nothing per point (nothing for a 2x2
// brief analysis of every pairing). Its results are bit for bit those of
// Analyze.
//
// The Analysis that Analyzer.Analyze returns, and everything it points to
// (K, Kd, RGA, Sensitivity, SVD, Dl, Dr, the pairings and their slices and
// matrices), belong to the Analyzer and are overwritten by the next call:
// copy what you keep. Outputs, Inputs and Disturbances may be the gain
// set's own slices. An Analyzer is not safe for concurrent
// use; give each goroutine its own.
type Analyzer struct {
	opts Options
	th   Thresholds

	a    Analysis
	svd  SVDResult
	svdN SVDResult // the SVD without directions (Options.NoDirections)

	k, kd, full, fullD     mat.Dense // square scaled gains; the whole scaled set when not square
	fy                     []float64
	rga, sens, kinv, kinvD mat.Dense
	dl, dr                 []float64
	rows, cols             []int
	outs, ins              []Signal
	notes                  []string

	lu  luWork
	sw  svdWork
	mw  minWork
	iw  integrityWork
	sc  screener
	per Pairing

	cands    []candidate
	store    []int
	res      []PairingResult
	slots    []resultSlot
	fresh    bool // the Analysis will be the caller's: copy the signal lists
	shaped2  bool // the storage matrix2 fills is 2x2 (see shape2)
	v2       view2
	route2   bool // a 2x2 gain set without disturbances takes brief2
	unscaled bool // opts.Scaling is ScaleNone
	b2       brief2Store
}

// resultSlot is the storage of the k-th detailed pairing.
type resultSlot struct {
	pairs   Pairing
	lambdas []float64
	rdg     mat.Dense
	integ   []SubsystemCheck
}

// NewAnalyzer returns an Analyzer with the options opts (nil means the
// defaults), copied: later changes to *opts do not affect it.
func NewAnalyzer(opts *Options) *Analyzer {
	z := &Analyzer{}
	if opts != nil {
		z.opts = *opts
	}
	z.th = z.opts.Thresholds.withDefaults()
	z.route2 = z.opts.Brief && z.opts.MaxPairings != 1
	z.unscaled = z.opts.Scaling == ScaleNone
	return z
}

// Analyze analyses g as the package function Analyze does, into the
// Analyzer's storage: the result is valid until the next call.
func (z *Analyzer) Analyze(g *GainSet) (*Analysis, error) {
	if len(g.Outputs) != 2 || len(g.Inputs) != 2 {
		z.shaped2 = false // K may change shape (see view2)
	} else if z.route2 && g.Kd == nil {
		if a, done, err := z.brief2(g); done {
			return a, err
		}
	}
	opts := &z.opts
	if len(g.Outputs) == 0 || len(g.Inputs) == 0 {
		return nil, fmt.Errorf("interact: the gain set from %s has %d outputs and %d inputs: need at least one of each", sourceName(g), len(g.Outputs), len(g.Inputs))
	}
	m, n0 := len(g.Outputs), len(g.Inputs)
	square := m == n0
	k, kd := &z.k, &z.kd
	if !square {
		k, kd = &z.full, &z.fullD
	}
	var err error
	if z.fy, err = g.scaledInto(opts.Scaling, k, kd, z.fy); err != nil {
		return nil, err
	}
	kr := k.RawMatrix()
	for i := range g.Outputs {
		for j, v := range kr.Data[i*kr.Stride : i*kr.Stride+n0] {
			if v-v != 0 { // ±Inf or NaN
				return nil, fmt.Errorf("interact: gain %s/%s is %v: every gain must be a finite number", g.Outputs[i].Name, g.Inputs[j].Name, v)
			}
		}
	}
	a := &z.a
	// Field by field: storing a whole struct with pointers costs more.
	a.Source, a.Scaling, a.Caution = g.Source, opts.Scaling, Caution
	a.Outputs, a.Inputs, a.Disturbances, a.OutputIndex, a.InputIndex = nil, nil, nil, nil, nil
	a.K, a.Kd, a.Selection, a.RGA, a.Sensitivity, a.SVD = nil, nil, nil, nil, nil, nil
	a.Det, a.MinCond, a.Dl, a.Dr = 0, 0, nil, nil
	a.Method, a.Screened, a.Rejected, a.Pairings, a.Notes = "", 0, 0, nil, nil
	z.rows, z.cols = seqInto(z.rows, m), seqInto(z.cols, n0)
	rows, cols := z.rows, z.cols
	if !square {
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
		pickInto(&z.k, k, rows, cols)
		if g.Kd != nil {
			pickInto(&z.kd, kd, rows, seq(len(g.Disturbances)))
		}
	}
	a.OutputIndex, a.InputIndex = rows, cols
	if square && !z.fresh {
		// Every signal is kept, in order: share the gain set's lists, as
		// Disturbances always does.
		a.Outputs, a.Inputs = g.Outputs, g.Inputs
	} else {
		z.outs, z.ins = z.outs[:0], z.ins[:0]
		for _, i := range rows {
			z.outs = append(z.outs, g.Outputs[i])
		}
		for _, j := range cols {
			z.ins = append(z.ins, g.Inputs[j])
		}
		a.Outputs, a.Inputs = z.outs, z.ins
	}
	a.Disturbances = g.Disturbances
	a.K = &z.k
	if g.Kd != nil {
		a.Kd = &z.kd
	}
	n := len(rows)
	maxOut := opts.MaxPairings
	if maxOut == 0 {
		maxOut = 10
	}
	if n == 2 {
		kr := z.k.RawMatrix()
		k00, k01, k10, k11 := kr.Data[0], kr.Data[1], kr.Data[kr.Stride], kr.Data[kr.Stride+1]
		ok, err := z.matrix2(k00, k01, k10, k11)
		if err != nil {
			return nil, err
		}
		if ok {
			if opts.NoDirections {
				z.dropDirections()
			}
			if opts.Brief && (maxOut < 0 || maxOut >= 2) {
				z.pairings2(k00, k01, k10, k11)
				return a, nil
			}
			return z.rank(a, n, maxOut)
		}
	}

	z.shaped2 = false // the storage below may change shape

	// One LU of K gives the RGA, det K and (with disturbances) K⁻¹Kd; one
	// SVD gives the singular values and the singularity test of the
	// minimised condition number.
	reshape(&z.rga, n, n)
	det, err := rgaDetWith(&z.lu, &z.rga, &z.kinv, a.K)
	if err != nil {
		return nil, &SingularError{What: "the gain matrix K (" + strings.Join(names(a.Outputs), ", ") + " by " + strings.Join(names(a.Inputs), ", ") + ")", Cond: float64(asCondition(err))}
	}
	if n == 2 {
		// The 2x2 determinant, whichever path computes the rest.
		kr := a.K.RawMatrix()
		det = det2(kr.Data[0], kr.Data[1], kr.Data[kr.Stride], kr.Data[kr.Stride+1])
	}
	a.RGA = &z.rga
	zeroRoundoff(a.RGA)
	reshape(&z.sens, n, n)
	elementSensitivityInto(&z.sens, a.RGA)
	a.Sensitivity = &z.sens
	a.Det = det
	if err := z.sw.svdInto(&z.svd, a.K); err != nil {
		return nil, err
	}
	a.SVD = &z.svd
	if a.MinCond, err = minCondInto(a.K, a.SVD, &z.dl, &z.dr, &z.mw); err != nil {
		return nil, err
	}
	a.Dl, a.Dr = z.dl, z.dr
	z.noteCondition()
	if opts.NoDirections {
		z.dropDirections()
	}
	return z.rank(a, n, maxOut)
}

// dropDirections takes out of the analysis what Options.NoDirections
// leaves out, once its numbers are computed: Sensitivity, Dl, Dr, and
// SVD.U and SVD.V, the SVD becoming z.svdN with the same values and
// condition number.
func (z *Analyzer) dropDirections() {
	a := &z.a
	a.Sensitivity, a.Dl, a.Dr = nil, nil, nil
	if a.SVD != nil {
		n := &z.svdN
		n.Values, n.Cond, n.U, n.V = a.SVD.Values, a.SVD.Cond, nil, nil
		a.SVD = n
	}
}

// noteCondition adds the note on γ* when it exceeds CondHigh.
func (z *Analyzer) noteCondition() {
	a, th := &z.a, z.th
	if a.MinCond > th.CondHigh {
		z.notes = append(z.notes[:0], fmt.Sprintf("K is ill-conditioned whatever the scaling: minimised condition number γ* = %s > %s. Some output combinations need input moves %s times larger than others, and the pairing conclusions are sensitive to errors in the gains.", fmtNum(a.MinCond), fmtNum(th.CondHigh), fmtNum(a.MinCond)))
		a.Notes = z.notes
	}
}

// rank screens, details and ranks the pairings of the n×n analysis a, whose
// matrices are in place, keeping the best maxOut (all when negative).
func (z *Analyzer) rank(a *Analysis, n, maxOut int) (*Analysis, error) {
	opts, th := &z.opts, z.th
	sc := &z.sc
	sc.init(a, th, &z.kinv, &z.kinvD, &z.iw, opts.Brief)
	z.cands = z.cands[:0]
	if n <= MaxEnumerate && (maxOut < 0 || maxOut >= factorial(n)) {
		if !opts.Brief {
			a.Method = fmt.Sprintf("all %d pairings enumerated", factorial(n))
		}
		z.detailAll(n)
		return a, nil
	}
	if n <= MaxEnumerate {
		if !opts.Brief {
			a.Method = fmt.Sprintf("all %d pairings enumerated", factorial(n))
		}
		z.store = resizeInts(z.store, factorial(n)*n)
		p := Pairing(seqInto(z.per, n))
		z.per = p
		for at := 0; ; at += n {
			z.cands = append(z.cands, sc.screen(p, z.store[at:at+n:at+n]))
			if !nextPermutation(p) {
				break
			}
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
		z.store = resizeInts(z.store, len(best)*n)
		for t, p := range best {
			z.cands = append(z.cands, sc.screen(p, z.store[t*n:t*n+n:t*n+n]))
		}
	}
	cands := z.cands
	a.Screened = len(cands)
	for _, c := range cands {
		if c.rejected {
			a.Rejected++
		}
	}
	// compare is a total order (distinct pairings break every tie), so the
	// order does not depend on the sorting algorithm.
	slices.SortFunc(cands, candidate.compare)
	if maxOut < 0 || maxOut > len(cands) {
		maxOut = len(cands)
	}
	// Details (integrity above all) cost far more than the screen, and only
	// add penalties: evaluate in screen order and stop once the next
	// candidate cannot beat the maxOut-th result.
	res := z.res[:0]
	for _, c := range cands {
		if len(res) >= maxOut {
			last := &res[maxOut-1]
			if (candidate{p: c.p, rejected: c.rejected, score: c.score}).compare(candidate{p: last.Pairs, rejected: last.Verdict == Rejected, score: last.Score}) > 0 {
				break
			}
		}
		t := len(res)
		if t == len(z.slots) {
			z.slots = append(z.slots, resultSlot{})
		}
		res = append(res, PairingResult{})
		sc.detail(&res[t], c.p, &z.slots[t])
		// res[:t] is sorted: insert the new result in its place.
		for j := t; j > 0 && compareResultsAt(&res[j-1], &res[j]) > 0; j-- {
			res[j-1], res[j] = res[j], res[j-1]
		}
	}
	z.res = res
	a.Pairings = res[:min(maxOut, len(res))]
	return a, nil
}

// detailAll details every pairing of the n×n analysis, for when all of
// them are wanted: the screen's bound and its early stop then save nothing.
// The result is what the screen-first path gives: the screen rejects
// exactly the pairings the detail rejects (a paired λ <= 0 or gain 0, and
// for n >= 3 NI < 0 or NaN, which needs a zero paired gain), and the ranking
// is the total order of compareResults.
func (z *Analyzer) detailAll(n int) {
	a, sc := &z.a, &z.sc
	p := Pairing(seqInto(z.per, n))
	z.per = p
	res := z.res[:0]
	for t := 0; ; t++ {
		if t == len(z.slots) {
			z.slots = append(z.slots, resultSlot{})
		}
		if t < cap(res) {
			res = res[:t+1] // detail sets every field
		} else {
			res = append(res, PairingResult{})
		}
		sc.detail(&res[t], p, &z.slots[t])
		if res[t].Verdict == Rejected {
			a.Rejected++
		}
		if !nextPermutation(p) {
			break
		}
	}
	a.Screened = len(res)
	if len(res) <= 24 {
		for t := 1; t < len(res); t++ {
			for j := t; j > 0 && compareResultsAt(&res[j-1], &res[j]) > 0; j-- {
				res[j-1], res[j] = res[j], res[j-1]
			}
		}
	} else {
		slices.SortFunc(res, compareResults)
	}
	z.res = res
	a.Pairings = res
}

func compareResultsAt(x, y *PairingResult) int {
	return candidate{p: x.Pairs, rejected: x.Verdict == Rejected, score: x.Score}.compare(candidate{p: y.Pairs, rejected: y.Verdict == Rejected, score: y.Score})
}

func compareResults(x, y PairingResult) int {
	return candidate{p: x.Pairs, rejected: x.Verdict == Rejected, score: x.Score}.compare(candidate{p: y.Pairs, rejected: y.Verdict == Rejected, score: y.Score})
}

type candidate struct {
	p        Pairing
	rejected bool
	score    float64 // a lower bound of the final score
}

func (c candidate) compare(d candidate) int {
	if c.rejected != d.rejected {
		if c.rejected {
			return 1
		}
		return -1
	}
	if r := cmp.Compare(c.score, d.score); r != 0 {
		return r
	}
	return c.p.Compare(d.p)
}

type screener struct {
	a      *Analysis
	th     Thresholds
	n      int
	det    float64
	sumAbs float64   // Σ|λ_ij|
	rga, k []float64 // the RGA and K, rows of stride rs and ks
	rs, ks int
	kinvKd *mat.Dense // K⁻¹Kd, nil without disturbances
	iw     *integrityWork
	words  bool // build reasons and labels (not Options.Brief)
	outN   []string
	inN    []string
	distN  []string
}

// init readies s for the analysis a; kinv = K⁻¹, which the caller has at
// hand, and kinvKd is storage for K⁻¹Kd.
func (s *screener) init(a *Analysis, th Thresholds, kinv, kinvKd *mat.Dense, iw *integrityWork, brief bool) {
	n, _ := a.K.Dims()
	// Field by field: storing a whole struct with pointers costs more.
	s.a, s.th, s.n, s.det, s.iw, s.words = a, th, n, a.Det, iw, !brief
	s.sumAbs, s.kinvKd, s.outN, s.inN, s.distN = 0, nil, nil, nil, nil
	rr, kr := a.RGA.RawMatrix(), a.K.RawMatrix()
	s.rga, s.rs, s.k, s.ks = rr.Data, rr.Stride, kr.Data, kr.Stride
	if s.words {
		s.outN, s.inN, s.distN = names(a.Outputs), names(a.Inputs), names(a.Disturbances)
	}
	for _, v := range a.RGA.RawMatrix().Data {
		s.sumAbs += math.Abs(v)
	}
	if a.Kd != nil {
		mulInto(kinvKd, kinv, a.Kd)
		s.kinvKd = kinvKd
	}
}

// screen computes the cheap part: rejection and a lower bound of the score
// (everything but integrity), O(n·(1+nd)) per pairing. The candidate keeps
// a copy of p in store.
func (s *screener) screen(p, store Pairing) candidate {
	copy(store, p)
	c := candidate{p: store}
	rgaNum := s.sumAbs
	cautions := 0
	for i, j := range p {
		l := s.rga[i*s.rs+j]
		rgaNum += math.Abs(l-1) - math.Abs(l)
		switch {
		case l <= 0 || s.k[i*s.ks+j] == 0:
			c.rejected = true
		case l < s.th.LambdaLow || l > s.th.LambdaHigh:
			cautions++
		}
	}
	ni := s.niederlinski(p)
	if s.n >= 3 {
		if ni < 0 || math.IsNaN(ni) {
			c.rejected = true
		} else if ni < s.th.NISmall {
			cautions++
		}
	}
	if s.kinvKd != nil {
		cautions += s.rdgCautions(p)
	}
	c.score = rgaNum + 2*float64(cautions)
	return c
}

// niederlinski is the package's niederlinski on the screener's K.
func (s *screener) niederlinski(p Pairing) float64 {
	prod := 1.0
	for i, j := range p {
		prod *= s.k[i*s.ks+j]
	}
	if prod == 0 {
		return math.NaN()
	}
	return float64(p.sign()) * s.det / prod
}

// rdgCautions counts the relative disturbance gains of p above RDGHigh,
// each computed as rdgInto computes it.
func (s *screener) rdgCautions(p Pairing) int {
	k, kd, x := s.a.K, s.a.Kd, s.kinvKd
	n, nd := kd.Dims()
	count := 0
	for d := 0; d < nd; d++ {
		big := 0.0
		for i := 0; i < n; i++ {
			big = math.Max(big, math.Abs(kd.At(i, d)))
		}
		for i := 0; i < n; i++ {
			g := kd.At(i, d)
			if big == 0 || math.Abs(g) <= 1e-9*big {
				continue // NaN in the RDG: never above the threshold
			}
			if math.Abs(k.At(i, p[i])*x.At(p[i], d)/g) > s.th.RDGHigh {
				count++
			}
		}
	}
	return count
}

// detail builds the full result of p in *r, with integrity, and with reasons
// and label unless the analysis is brief; its slices and matrices live in
// slot. The verdict and score count the rejections and cautions, so they do
// not depend on the words.
func (s *screener) detail(r *PairingResult, p Pairing, slot *resultSlot) {
	a, th, words := s.a, s.th, s.words
	slot.pairs = append(slot.pairs[:0], p...)
	slot.lambdas = resizeFloats(slot.lambdas, s.n)
	r.Pairs, r.Lambdas, r.Label, r.Reasons, r.Integrity, r.RDG = slot.pairs, slot.lambdas, "", nil, nil, nil
	r.Niederlinski, r.RGANumber, r.Verdict, r.Score = 0, 0, 0, 0
	if words {
		r.Label = p.Label(s.outN, s.inN)
	}
	var rejects, cautions, good []string
	nRejects, nCautions := 0, 0
	allGood := true
	for i, j := range p {
		l := s.rga[i*s.rs+j]
		kij := s.k[i*s.ks+j]
		r.Lambdas[i] = l
		var pair string
		if words {
			pair = fmt.Sprintf("%s paired with %s", s.outN[i], s.inN[j])
		}
		switch {
		case kij == 0:
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
		inBand := l >= th.LambdaLow && l <= th.LambdaHigh && kij != 0
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
		l := s.rga[i*s.rs+j]
		r.RGANumber += math.Abs(l-1) - math.Abs(l)
	}
	r.Niederlinski = s.niederlinski(p)
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
		_, nd := a.Kd.Dims()
		reshape(&slot.rdg, s.n, nd)
		rdgInto(&slot.rdg, a.K, a.Kd, s.kinvKd, p)
		r.RDG = &slot.rdg
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
		slot.integ = s.iw.failing(slot.integ[:0], a.K, p)
		if len(slot.integ) > 0 {
			r.Integrity = slot.integ
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
		return
	}
	r.Reasons = append(append(append(rejects, cautions...), a.Notes...), good...)
	if s.n >= 3 && r.Niederlinski > 0 && len(rejects) == 0 {
		r.Reasons = append(r.Reasons, fmt.Sprintf("Niederlinski index NI = %s > 0.", fmtNum(r.Niederlinski)))
	}
	if s.n >= 3 && len(rejects) == 0 && len(r.Integrity) == 0 {
		r.Reasons = append(r.Reasons, "Integrity holds: every set of loops left in automatic keeps NI > 0 and positive paired λ.")
	}
}

func (s *screener) integrityReason(p Pairing, fails []SubsystemCheck) string {
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

// reshape makes d an r×c matrix, reusing its storage; the contents are
// left for the caller to overwrite.
func reshape(d *mat.Dense, r, c int) {
	if !d.IsEmpty() {
		if rr, cc := d.Dims(); rr == r && cc == c {
			return
		}
		d.Reset()
	}
	d.ReuseAs(r, c)
}

func pickInto(dst, k *mat.Dense, rows, cols []int) {
	reshape(dst, len(rows), len(cols))
	for a, i := range rows {
		for b, j := range cols {
			dst.Set(a, b, k.At(i, j))
		}
	}
}

func seqInto(s []int, n int) []int {
	s = resizeInts(s, n)
	for i := range s {
		s[i] = i
	}
	return s
}

func resizeInts(s []int, n int) []int {
	if cap(s) < n {
		return make([]int, n)
	}
	return s[:n]
}

// mulInto stores a·b in dst (reshaped, not aliasing a or b) as Dense.Mul
// computes it: for the sizes of a gain matrix gonum's serial Dgemm, whose
// arithmetic is written out here (rows of dst accumulated from +0 in the
// order of a's columns, zero elements of a skipped); larger products go to
// Dense.Mul itself.
func mulInto(dst, a, b *mat.Dense) {
	m, k := a.Dims()
	_, n := b.Dims()
	if m > 64 || n > 64 || k > 64 {
		dst.Reset()
		dst.Mul(a, b)
		return
	}
	reshape(dst, m, n)
	ar, br, dr := a.RawMatrix(), b.RawMatrix(), dst.RawMatrix()
	for i := 0; i < m; i++ {
		c := dr.Data[i*dr.Stride : i*dr.Stride+n]
		for j := range c {
			c[j] = 0
		}
		for l, v := range ar.Data[i*ar.Stride : i*ar.Stride+k] {
			if v != 0 {
				for j, x := range br.Data[l*br.Stride : l*br.Stride+n] {
					c[j] += float64(v * x) // no multiply-add: gonum's kernel rounds both
				}
			}
		}
	}
}
