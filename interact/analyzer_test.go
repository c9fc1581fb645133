package interact

import (
	"fmt"
	"math"
	"math/rand/v2"
	"slices"
	"testing"

	"gonum.org/v1/gonum/mat"
)

// relTol2 is how far the numbers that the 2x2 closed form computes
// differently from the reference (det K, the Niederlinski indices and γ*)
// may move, relative; every other number, and all of them for n != 2,
// must be the same bit for bit.
const relTol2 = 1e-13

// closeNum compares a number of an n×n analysis with the reference's y.
func closeNum(x, y float64, n int) bool {
	return sameBits(x, y) || (n == 2 && math.Abs(x-y) <= relTol2*math.Abs(y))
}

// analysisDiff names the first field in which two analyses differ, bit for
// bit (but for closeNum's numbers) and nil for nil ("" when none does).
func analysisDiff(x, y *Analysis) string {
	nilDiff := func(a, b bool) bool { return a != b }
	n := len(x.OutputIndex)
	switch {
	case x.Source != y.Source || x.Scaling != y.Scaling || x.Caution != y.Caution:
		return "source, scaling or caution"
	case !slices.Equal(x.Outputs, y.Outputs) || !slices.Equal(x.Inputs, y.Inputs) || !slices.Equal(x.Disturbances, y.Disturbances):
		return "signals"
	case !slices.Equal(x.OutputIndex, y.OutputIndex) || !slices.Equal(x.InputIndex, y.InputIndex):
		return "indices"
	case !sameDense(x.K, y.K) || !sameDense(x.Kd, y.Kd):
		return "K"
	case nilDiff(x.Selection == nil, y.Selection == nil):
		return "selection"
	case !sameDense(x.RGA, y.RGA) || !sameDense(x.Sensitivity, y.Sensitivity):
		return "RGA"
	case !closeNum(x.Det, y.Det, n):
		return fmt.Sprintf("det %v, %v", x.Det, y.Det)
	case !sameSlice(x.SVD.Values, y.SVD.Values) || !sameBits(x.SVD.Cond, y.SVD.Cond) || !sameDense(x.SVD.U, y.SVD.U) || !sameDense(x.SVD.V, y.SVD.V):
		return "SVD"
	case !closeNum(x.MinCond, y.MinCond, n) || !sameSlice(x.Dl, y.Dl) || !sameSlice(x.Dr, y.Dr):
		return fmt.Sprintf("γ* %v, %v", x.MinCond, y.MinCond)
	case x.Method != y.Method || x.Screened != y.Screened || x.Rejected != y.Rejected:
		return "method or counts"
	case !slices.Equal(x.Notes, y.Notes) || nilDiff(x.Notes == nil, y.Notes == nil):
		return "notes"
	case len(x.Pairings) != len(y.Pairings):
		return "number of pairings"
	}
	if s, t := x.Selection, y.Selection; s != nil {
		if !sameDense(s.RGA, t.RGA) || s.Outputs != t.Outputs || !sameSlice(s.Sums, t.Sums) || !slices.Equal(s.Kept, t.Kept) ||
			!slices.Equal(s.Dropped, t.Dropped) || !slices.Equal(s.Reasons, t.Reasons) {
			return "selection"
		}
	}
	for k, p := range x.Pairings {
		q := y.Pairings[k]
		switch {
		case !slices.Equal(p.Pairs, q.Pairs):
			return "ranking"
		case p.Label != q.Label || !slices.Equal(p.Reasons, q.Reasons) || nilDiff(p.Reasons == nil, q.Reasons == nil):
			return "words of " + p.Pairs.String()
		case p.Verdict != q.Verdict:
			return "verdict of " + p.Pairs.String()
		case !sameBits(p.Score, q.Score) || !sameBits(p.RGANumber, q.RGANumber) || !closeNum(p.Niederlinski, q.Niederlinski, n):
			return fmt.Sprintf("numbers of %v: score %v, %v; RGA number %v, %v; NI %v, %v", p.Pairs, p.Score, q.Score, p.RGANumber, q.RGANumber, p.Niederlinski, q.Niederlinski)
		case !sameSlice(p.Lambdas, q.Lambdas) || !sameDense(p.RDG, q.RDG):
			return "λ or β of " + p.Pairs.String()
		case len(p.Integrity) != len(q.Integrity) || nilDiff(p.Integrity == nil, q.Integrity == nil):
			return "integrity of " + p.Pairs.String()
		}
		for i, c := range p.Integrity {
			d := q.Integrity[i]
			if !slices.Equal(c.Auto, d.Auto) || !sameBits(c.NI, d.NI) || !sameSlice(c.Lambdas, d.Lambdas) || c.Fails != d.Fails {
				return "integrity of " + p.Pairs.String()
			}
		}
	}
	return ""
}

// randomGainSet is a seeded random gain set for trial: hard matrices of
// sizes 1 to 4 (some 5), some non-square, some with disturbances, spans and
// nominal values for every scaling.
func randomGainSet(rnd *rand.Rand, trial int) *GainSet {
	n := 1 + rnd.IntN(4)
	if trial%41 == 0 {
		n = 5
	}
	m := n
	if trial%7 == 0 {
		m = n + 1 + rnd.IntN(2)
	}
	k := hardMatrix(rnd, m, n, trial)
	if trial%3 == 0 {
		for i := 0; i < min(m, n); i++ {
			k.Set(i, i, k.At(i, i)+2)
		}
	}
	g := gainSet(k, names4(m, "y"), names4(n, "u"))
	if trial%2 == 0 {
		nd := 1 + rnd.IntN(2)
		g.Kd = randMatrix(rnd, m, nd)
		if trial%8 == 0 {
			g.Kd.Set(0, 0, 0)
		}
		for d := 0; d < nd; d++ {
			g.Disturbances = append(g.Disturbances, Signal{Name: names4(nd, "d")[d], Span: 1, Nominal: 1})
		}
	}
	for i := range g.Outputs {
		g.Outputs[i].Span, g.Outputs[i].Nominal = 0.5+rnd.Float64(), 1+rnd.Float64()
	}
	for j := range g.Inputs {
		g.Inputs[j].Span, g.Inputs[j].Nominal = 0.5+rnd.Float64(), 1+rnd.Float64()
	}
	if trial%53 == 0 {
		g.Inputs[0].Span = 0 // a scaling error
	}
	return g
}

func randomOptions(trial int) Options {
	opts := Options{Scaling: Scaling(trial % 3), MaxPairings: []int{0, -1, 2, -1}[trial%4], Brief: trial%5 < 2}
	if trial%4 == 1 {
		opts.Thresholds = Thresholds{LambdaLow: 0.8, LambdaHigh: 1.3, NISmall: 0.6, RDGHigh: 1.5, CondHigh: 5}
	}
	return opts
}

// The Analyzer gives exactly what the analysis gave before it (the
// reference in ref_test.go: gonum's LU and SVD, fresh storage): every
// number bit for bit, every verdict, word and the ranking, and the same
// errors; and an Analyzer reused across gain sets of changing sizes gives
// what a fresh one gives.
func TestAnalyzerSameAsReference(t *testing.T) {
	rnd := rand.New(rand.NewPCG(2026, 121))
	reused := map[Options]*Analyzer{}
	verdicts := map[Verdict]int{}
	errs := 0
	for trial := 0; trial < trialCount(1500); trial++ {
		g := randomGainSet(rnd, trial)
		opts := randomOptions(trial)
		what := fmt.Sprintf("trial %d (%v, %+v)", trial, g.K.RawMatrix().Data, opts)
		want, errW := refAnalyze(g, &opts)
		got, errG := Analyze(g, &opts)
		z := reused[opts]
		if z == nil {
			z = NewAnalyzer(&opts)
			reused[opts] = z
		}
		again, errA := z.Analyze(g)
		for _, e := range []error{errG, errA} {
			if (errW == nil) != (e == nil) || (errW != nil && errW.Error() != e.Error()) {
				t.Fatalf("%s: error %v, reference %v", what, e, errW)
			}
		}
		if errW != nil {
			errs++
			continue
		}
		if d := analysisDiff(got, want); d != "" {
			t.Fatalf("%s: Analyze differs from the reference in %s", what, d)
		}
		if d := analysisDiff(again, want); d != "" {
			t.Fatalf("%s: a reused Analyzer differs from the reference in %s", what, d)
		}
		for _, p := range want.Pairings {
			verdicts[p.Verdict]++
		}
	}
	for v := Recommended; v <= Rejected; v++ {
		if verdicts[v] == 0 {
			t.Errorf("no pairing came out %v: the random sets do not exercise that verdict", v)
		}
	}
	if errs == 0 {
		t.Error("no trial failed: the random sets do not exercise the errors")
	}
}

// An Analyzer's results are its own: a second call overwrites the first.
// The Analysis from the package function Analyze is the caller's.
func TestAnalyzerReusesStorage(t *testing.T) {
	g1 := gainSet(mat.NewDense(2, 2, []float64{12.8, -18.9, 6.6, -19.4}), []string{"xD", "xB"}, []string{"R", "S"})
	g2 := gainSet(mat.NewDense(2, 2, []float64{87.8, -86.4, 108.2, -109.6}), []string{"xD", "xB"}, []string{"L", "V"})
	z := NewAnalyzer(&Options{Brief: true, MaxPairings: -1})
	a1, err := z.Analyze(g1)
	if err != nil {
		t.Fatal(err)
	}
	rga1 := a1.RGA.At(0, 0)
	a2, err := z.Analyze(g2)
	if err != nil {
		t.Fatal(err)
	}
	if a1 != a2 || a1.RGA.At(0, 0) == rga1 {
		t.Errorf("the Analyzer did not reuse its Analysis")
	}
	// checkvalues §1: λ11 of Wood-Berry is 2.0094; §2c: column A LV λ11 = 35.1.
	if !near(rga1, 2.0094, 1e-4) || !near(a2.RGA.At(0, 0), 35.1, 2e-3) {
		t.Errorf("λ11 = %g then %g, want 2.0094 (checkvalues §1) and 35.1 (checkvalues §2c)", rga1, a2.RGA.At(0, 0))
	}
	b1, _ := Analyze(g1, nil)
	b2, _ := Analyze(g2, nil)
	if b1 == b2 || b1.RGA == b2.RGA || b1.RGA.At(0, 0) != rga1 {
		t.Errorf("Analyze shares storage between calls")
	}
}

// The sweep's case allocates nothing: a 2x2 brief analysis with every
// pairing, after the first, allocates nothing.
func TestAnalyzerAllocations(t *testing.T) {
	z := NewAnalyzer(briefOpts)
	for _, nd := range []int{0, 2} {
		g := benchGains(2, nd)
		if _, err := z.Analyze(g); err != nil {
			t.Fatal(err)
		}
		allocs := testing.AllocsPerRun(100, func() {
			if _, err := z.Analyze(g); err != nil {
				t.Fatal(err)
			}
		})
		if allocs > 0 {
			t.Errorf("2x2 with %d disturbances: %v allocations per analysis, want 0", nd, allocs)
		}
	}
}

// trialCount is n, or a tenth of it with -short: the randomized equivalence
// tests are the slowest of the package.
func trialCount(n int) int {
	if testing.Short() {
		return max(n/10, 1)
	}
	return n
}
