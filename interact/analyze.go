package interact

import (
	"cmp"
	"fmt"
	"math"
	"slices"
	"strconv"
	"strings"

	"gonum.org/v1/gonum/mat"
)

// Verdict is the screening class of a pairing.
type Verdict int

const (
	Recommended Verdict = iota // no caution, every paired λ close to 1
	Acceptable                 // no caution, some paired λ further from 1
	Cautioned                  // at least one caution: read the reasons
	Rejected                   // a screen that rules the pairing out
)

var verdictNames = [...]string{"recommended", "acceptable", "caution", "rejected"}

func (v Verdict) String() string {
	if v >= 0 && int(v) < len(verdictNames) {
		return verdictNames[v]
	}
	return fmt.Sprintf("Verdict(%d)", int(v))
}

// MarshalText writes the verdict's name, for JSON.
func (v Verdict) MarshalText() ([]byte, error) { return []byte(v.String()), nil }

// Thresholds are the screening limits. A zero field takes the default in
// its comment (our defaults, common practice).
type Thresholds struct {
	LambdaLow  float64 // caution below; default 0.5
	LambdaHigh float64 // caution above; default 4
	GoodLow    float64 // recommended needs every paired λ >= this; default 0.67
	GoodHigh   float64 // recommended needs every paired λ <= this; default 1.5
	NISmall    float64 // caution when 0 < NI < this, n >= 3; default 0.1
	RDGHigh    float64 // caution when a relative disturbance gain |β| exceeds this; default 4
	CondHigh   float64 // note on every pairing when the minimised condition number exceeds this; default 50
}

func (t Thresholds) withDefaults() Thresholds {
	def := func(v *float64, d float64) {
		if *v == 0 {
			*v = d
		}
	}
	def(&t.LambdaLow, 0.5)
	def(&t.LambdaHigh, 4)
	def(&t.GoodLow, 0.67)
	def(&t.GoodHigh, 1.5)
	def(&t.NISmall, 0.1)
	def(&t.RDGHigh, 4)
	def(&t.CondHigh, 50)
	return t
}

// Options control Analyze. A nil *Options means the defaults.
type Options struct {
	Scaling Scaling // how gains are scaled before analysis; default ScaleNone

	// MaxPairings is how many ranked pairings Analyze returns; 0 means 10,
	// negative means all of them (for n > MaxEnumerate, all means the
	// 1000 best by the separable part of the score). All is costly for
	// n = 8: integrity checks 246 loop subsets of every pairing that is not
	// rejected.
	MaxPairings int

	Thresholds Thresholds

	// Brief leaves out the words: each PairingResult's Reasons and Label,
	// and the Analysis's Method, stay empty. Every number, verdict and the
	// ranking are those of the full analysis; notes that hold for every
	// pairing are kept, since they decide verdicts. It is for callers that
	// analyse many points and keep only the numbers (an envelope sweep).
	Brief bool
}

// Analysis is the interaction analysis of a gain set at one operating point.
type Analysis struct {
	Source  string
	Scaling Scaling

	// The square system analysed. When the gain set is not square these are
	// the signals Selection kept; OutputIndex and InputIndex give their
	// positions in the gain set.
	Outputs, Inputs, Disturbances []Signal
	OutputIndex, InputIndex       []int
	K, Kd                         *mat.Dense // scaled gains of the square system; Kd nil without disturbances

	Selection *Selection // non-nil when the gain set was not square

	RGA         *mat.Dense // Λ of K
	Sensitivity *mat.Dense // 1/λ_ij: relative error in k_ij alone that makes K singular
	Det         float64    // det K (scaled)
	SVD         *SVDResult // of the scaled K
	MinCond     float64    // γ*, minimised over diagonal scalings
	Dl, Dr      []float64  // the scalings attaining γ*

	Method   string // how the pairings were searched, in words
	Screened int    // pairings screened
	Rejected int    // of those, how many were rejected
	Pairings []PairingResult
	Notes    []string // findings that hold for every pairing
	Caution  string   // the package Caution, always set
}

// Selection records how a non-square gain set was cut to a square one.
type Selection struct {
	RGA     *mat.Dense // the non-square RGA, K ∘ (K⁺)ᵀ of the whole scaled K
	Outputs bool       // true when outputs were chosen (more outputs than inputs), false for inputs
	Sums    []float64  // row sums (Outputs) or column sums of RGA
	Kept    []int      // chosen rows (or columns), best first
	Dropped []int      // the others, best first
	Reasons []string
}

// PairingResult is the screen of one pairing.
type PairingResult struct {
	Pairs        Pairing
	Label        string    // "xD-R, xB-S"
	Lambdas      []float64 // paired relative gains, by output
	Niederlinski float64
	RGANumber    float64 // ||Λ - P||_sum
	Verdict      Verdict
	Score        float64          // lower is better; see the package documentation
	Reasons      []string         // plain-language findings, rejections and cautions first
	Integrity    []SubsystemCheck // the failing subsystems only
	RDG          *mat.Dense       // relative disturbance gains β (outputs × disturbances); nil without disturbances
}

// Analyze scales the gains, cuts a non-square set to a square one, computes
// the interaction measures of K and screens and ranks the pairings as the
// package documentation describes. It returns an error naming the problem
// when a scaling lacks data, the gain set is empty, or K is singular.
func Analyze(g *GainSet, opts *Options) (*Analysis, error) {
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
	det, err := rgaDet(a.RGA, &kinv, a.K)
	if err != nil {
		return nil, &SingularError{What: "the gain matrix K (" + strings.Join(names(a.Outputs), ", ") + " by " + strings.Join(names(a.Inputs), ", ") + ")", Cond: float64(asCondition(err))}
	}
	zeroRoundoff(a.RGA)
	a.Sensitivity = ElementSensitivity(a.RGA)
	a.Det = det
	if a.SVD, err = SVD(a.K); err != nil {
		return nil, err
	}
	if a.MinCond, a.Dl, a.Dr, err = minConditionNumber(a.K, a.SVD); err != nil {
		return nil, err
	}
	if a.MinCond > th.CondHigh {
		a.Notes = append(a.Notes, fmt.Sprintf("K is ill-conditioned whatever the scaling: minimised condition number γ* = %s > %s. Some output combinations need input moves %s times larger than others, and the pairing conclusions are sensitive to errors in the gains.", fmtNum(a.MinCond), fmtNum(th.CondHigh), fmtNum(a.MinCond)))
	}

	sc := newScreener(a, th, &kinv, opts.Brief)
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
	sumAbs float64    // Σ|λ_ij|
	kinvKd *mat.Dense // K⁻¹Kd, nil without disturbances
	words  bool       // build reasons and labels (not Options.Brief)
	outN   []string
	inN    []string
	distN  []string
}

// newScreener takes kinv = K⁻¹, which Analyze has at hand.
func newScreener(a *Analysis, th Thresholds, kinv *mat.Dense, brief bool) *screener {
	n, _ := a.K.Dims()
	s := &screener{a: a, th: th, n: n, det: a.Det, words: !brief, outN: names(a.Outputs), inN: names(a.Inputs), distN: names(a.Disturbances)}
	for _, v := range a.RGA.RawMatrix().Data {
		s.sumAbs += math.Abs(v)
	}
	if a.Kd != nil {
		s.kinvKd = new(mat.Dense)
		s.kinvKd.Mul(kinv, a.Kd)
	}
	return s
}

// screen computes the cheap part: rejection and a lower bound of the score
// (everything but integrity), O(n·(1+nd)) per pairing.
func (s *screener) screen(p Pairing) candidate {
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

func (s *screener) rdgCautions(b *mat.Dense) int {
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
func (s *screener) detail(p Pairing) PairingResult {
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
		for _, chk := range Integrity(a.K, p) {
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

func selectSquare(g *GainSet, k *mat.Dense) (*Selection, error) {
	m, n := k.Dims()
	sel := &Selection{RGA: new(mat.Dense), Outputs: m > n}
	if err := RGAPinv(sel.RGA, k); err != nil {
		return nil, fmt.Errorf("interact: cannot choose a square subsystem of the %dx%d gain matrix: %w", m, n, err)
	}
	var sigs []Signal
	var keep int
	if sel.Outputs {
		sigs, keep = g.Outputs, n
		for i := 0; i < m; i++ {
			sel.Sums = append(sel.Sums, mat.Sum(sel.RGA.RowView(i)))
		}
	} else {
		sigs, keep = g.Inputs, m
		for j := 0; j < n; j++ {
			sel.Sums = append(sel.Sums, mat.Sum(sel.RGA.ColView(j)))
		}
	}
	order := seq(len(sigs))
	slices.SortStableFunc(order, func(x, y int) int { return cmp.Compare(sel.Sums[y], sel.Sums[x]) })
	sel.Kept, sel.Dropped = order[:keep], order[keep:]
	list := func(idx []int) string {
		parts := make([]string, len(idx))
		for k, i := range idx {
			parts[k] = fmt.Sprintf("%s (%s)", sigs[i].Name, fmtNum(sel.Sums[i]))
		}
		return strings.Join(parts, ", ")
	}
	if sel.Outputs {
		sel.Reasons = append(sel.Reasons,
			fmt.Sprintf("%d outputs but only %d inputs: at most %d outputs can be held at set points. Kept %s; dropped %s.", m, n, n, list(sel.Kept), list(sel.Dropped)),
			"The number in brackets is the row sum of the non-square RGA K ∘ (K⁺)ᵀ (Chang & Yu 1990): the share of that output lying in the range of K, 1 when the inputs can move it independently of the others, near 0 when they hardly can. The outputs with the largest sums are kept.")
	} else {
		sel.Reasons = append(sel.Reasons,
			fmt.Sprintf("%d inputs for only %d outputs: %d inputs are enough. Kept %s; the others (%s) are spare and may serve as valve-position or optimisation handles.", n, m, m, list(sel.Kept), list(sel.Dropped)),
			"The number in brackets is the column sum of the non-square RGA K ∘ (K⁺)ᵀ (Chang & Yu 1990): how much of that input's effect is independent of the others. The inputs with the largest sums are kept.")
	}
	return sel, nil
}

func pick(k *mat.Dense, rows, cols []int) *mat.Dense {
	out := mat.NewDense(len(rows), len(cols), nil)
	for a, i := range rows {
		for b, j := range cols {
			out.Set(a, b, k.At(i, j))
		}
	}
	return out
}

func seq(n int) []int {
	s := make([]int, n)
	for i := range s {
		s[i] = i
	}
	return s
}

func factorial(n int) int {
	f := 1
	for i := 2; i <= n; i++ {
		f *= i
	}
	return f
}

func sourceName(g *GainSet) string {
	if g.Source == "" {
		return "the caller"
	}
	return g.Source
}

// fmtNum prints a number with four significant digits, no exponent for
// ordinary magnitudes.
func fmtNum(v float64) string {
	if math.IsInf(v, 0) || math.IsNaN(v) {
		return strconv.FormatFloat(v, 'g', -1, 64)
	}
	if a := math.Abs(v); a != 0 && (a < 1e-3 || a >= 1e6) {
		return strconv.FormatFloat(v, 'e', 3, 64)
	}
	return strconv.FormatFloat(v, 'g', 4, 64)
}

// zeroRoundoff sets relative gains that are zero but for rounding (a gain
// that is structurally zero comes out of the implicit-function theorem as
// ±1e-17, say) to exactly zero, so that rounding noise never decides a
// sign screen. The threshold is 1e-10 of the largest |λ|, and at least 1e-10.
func zeroRoundoff(rga *mat.Dense) {
	raw := rga.RawMatrix()
	big := 1.0
	for i := 0; i < raw.Rows; i++ {
		for _, v := range raw.Data[i*raw.Stride : i*raw.Stride+raw.Cols] {
			big = math.Max(big, math.Abs(v))
		}
	}
	tol := 1e-10 * big
	for i := 0; i < raw.Rows; i++ {
		row := raw.Data[i*raw.Stride : i*raw.Stride+raw.Cols]
		for j, v := range row {
			if math.Abs(v) < tol {
				row[j] = 0
			}
		}
	}
}
