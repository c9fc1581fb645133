package interact

import (
	"fmt"
	"math"
	"math/rand/v2"
	"path/filepath"
	"slices"
	"testing"

	"gonum.org/v1/gonum/mat"

	"github.com/loopwright/loopwright/jacobian"
	"github.com/loopwright/loopwright/model"
	"github.com/loopwright/loopwright/solve"
)

// sameBits reports whether two floats are the same number bit for bit (any
// NaN equals any NaN).
func sameBits(x, y float64) bool {
	return math.Float64bits(x) == math.Float64bits(y) || (math.IsNaN(x) && math.IsNaN(y))
}

func sameSlice(x, y []float64) bool {
	return len(x) == len(y) && !slices.ContainsFunc(seq(len(x)), func(i int) bool { return !sameBits(x[i], y[i]) })
}

func sameDense(x, y *mat.Dense) bool {
	if x == nil || y == nil {
		return x == nil && y == nil
	}
	rx, cx := x.Dims()
	ry, cy := y.Dims()
	if rx != ry || cx != cy {
		return false
	}
	for i := 0; i < rx; i++ {
		if !sameSlice(x.RawRowView(i), y.RawRowView(i)) {
			return false
		}
	}
	return true
}

// briefDiff returns what differs between a brief and a full analysis of the
// same gains, other than the words Brief leaves out ("" when nothing does).
func briefDiff(brief, full *Analysis) string {
	switch {
	case brief.Method != "" || full.Method == "":
		return "method"
	case !sameDense(brief.K, full.K) || !sameDense(brief.Kd, full.Kd):
		return "K"
	case !sameDense(brief.RGA, full.RGA) || !sameDense(brief.Sensitivity, full.Sensitivity):
		return "RGA"
	case !sameBits(brief.Det, full.Det):
		return "det"
	case !sameSlice(brief.SVD.Values, full.SVD.Values) || !sameBits(brief.SVD.Cond, full.SVD.Cond) ||
		!sameDense(brief.SVD.U, full.SVD.U) || !sameDense(brief.SVD.V, full.SVD.V):
		return "SVD"
	case !sameBits(brief.MinCond, full.MinCond) || !sameSlice(brief.Dl, full.Dl) || !sameSlice(brief.Dr, full.Dr):
		return "γ*"
	case brief.Screened != full.Screened || brief.Rejected != full.Rejected:
		return "counts"
	case !slices.Equal(brief.Notes, full.Notes):
		return "notes"
	case !slices.Equal(brief.OutputIndex, full.OutputIndex) || !slices.Equal(brief.InputIndex, full.InputIndex):
		return "selection"
	case len(brief.Pairings) != len(full.Pairings):
		return "number of pairings"
	}
	for k, b := range brief.Pairings {
		f := full.Pairings[k]
		switch {
		case !slices.Equal(b.Pairs, f.Pairs):
			return "ranking"
		case b.Verdict != f.Verdict:
			return "verdict of " + f.Label
		case !sameBits(b.Score, f.Score) || !sameBits(b.RGANumber, f.RGANumber) || !sameBits(b.Niederlinski, f.Niederlinski):
			return "numbers of " + f.Label
		case !sameSlice(b.Lambdas, f.Lambdas) || !sameDense(b.RDG, f.RDG):
			return "λ or β of " + f.Label
		case len(b.Integrity) != len(f.Integrity):
			return "integrity of " + f.Label
		case b.Label != "" || len(b.Reasons) != 0 || f.Label == "" || len(f.Reasons) == 0:
			return "words of " + f.Label
		}
		for i, c := range b.Integrity {
			d := f.Integrity[i]
			if !slices.Equal(c.Auto, d.Auto) || !sameBits(c.NI, d.NI) || !sameSlice(c.Lambdas, d.Lambdas) || c.Fails != d.Fails {
				return "integrity of " + f.Label
			}
		}
	}
	return ""
}

// checkBrief analyses g with and without Brief and fails on any difference
// but the words; it returns the full analysis (nil when Analyze fails, which
// it must then do in both modes alike).
func checkBrief(t *testing.T, what string, g *GainSet, opts Options) *Analysis {
	t.Helper()
	full, errF := Analyze(g, &opts)
	opts.Brief = true
	brief, errB := Analyze(g, &opts)
	if (errF == nil) != (errB == nil) || (errF != nil && errF.Error() != errB.Error()) {
		t.Fatalf("%s: errors differ: full %v, brief %v", what, errF, errB)
	}
	if errF != nil {
		return nil
	}
	if d := briefDiff(brief, full); d != "" {
		t.Fatalf("%s: brief and full analyses differ in %s", what, d)
	}
	// Both modes against the analysis before the Analyzer (ref_test.go).
	for _, b := range []bool{false, true} {
		opts.Brief = b
		want, err := refAnalyze(g, &opts)
		if err != nil {
			t.Fatalf("%s: the reference fails (%v) where Analyze does not", what, err)
		}
		got := full
		if b {
			got = brief
		}
		if d := analysisDiff(got, want); d != "" {
			t.Fatalf("%s (brief %v): differs from the reference in %s", what, b, d)
		}
	}
	return full
}

// Brief must change nothing but the words: verdicts, scores, λ, NI and the
// ranking are compared bit for bit on random gain sets (seeded), square and
// not, with and without disturbances, with zero gains and tight thresholds
// so that every screen fires somewhere.
func TestBriefSameAsFullRandom(t *testing.T) {
	rnd := rand.New(rand.NewPCG(2026, 12))
	verdicts := map[Verdict]int{}
	for trial := 0; trial < 400; trial++ {
		n := 1 + rnd.IntN(4)
		m := n
		if trial%7 == 0 {
			m = n + 1 + rnd.IntN(2) // non-square: selection first
		}
		k := randMatrix(rnd, m, n)
		if trial%3 == 0 {
			for i := 0; i < min(m, n); i++ {
				k.Set(i, i, k.At(i, i)+2) // some diagonally dominant sets
			}
		}
		if trial%5 == 0 {
			k.Set(rnd.IntN(m), rnd.IntN(n), 0)
		}
		g := gainSet(k, names4(m, "y"), names4(n, "u"))
		if trial%2 == 0 {
			nd := 1 + rnd.IntN(2)
			g.Kd = randMatrix(rnd, m, nd)
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
		opts := Options{Scaling: Scaling(trial % 3), MaxPairings: []int{0, -1, 2}[trial%3]}
		if trial%4 == 1 {
			opts.Thresholds = Thresholds{LambdaLow: 0.8, LambdaHigh: 1.3, NISmall: 0.6, RDGHigh: 1.5, CondHigh: 5}
		}
		if a := checkBrief(t, fmt.Sprintf("trial %d (%dx%d)", trial, m, n), g, opts); a != nil {
			for _, p := range a.Pairings {
				verdicts[p.Verdict]++
			}
		}
	}
	// The comparison means something only if every verdict occurred.
	for v := Recommended; v <= Rejected; v++ {
		if verdicts[v] == 0 {
			t.Errorf("no pairing came out %v: the random sets do not exercise that verdict", v)
		}
	}
}

// The templates and test models at their nominal points, every scaling they
// support.
func TestBriefSameAsFullTemplates(t *testing.T) {
	files, _ := filepath.Glob("../library/templates/*.yaml")
	more, _ := filepath.Glob("../testdata/models/*.yaml")
	files = append(files, more...)
	if len(files) < 6 {
		t.Fatalf("found only %d model files", len(files))
	}
	for _, path := range files {
		f, err := model.LoadFile(path)
		if err != nil {
			t.Fatal(err)
		}
		sys, err := f.Expand(nil)
		if err != nil {
			t.Fatal(err)
		}
		prog, err := jacobian.Compile(sys)
		if err != nil {
			t.Fatal(err)
		}
		x := make([]float64, len(sys.Unknowns))
		for j, s := range sys.Unknowns {
			x[j] = s.Value
		}
		p := make([]float64, len(sys.Params))
		for k, s := range sys.Params {
			p[k] = s.Value
		}
		pat := prog.Pattern()
		ev := prog.NewEval()
		n := len(x)
		res, err := solve.Newton(t.Context(), &solve.Problem{N: n, RowPtr: pat.RowPtr, ColIdx: pat.ColIdx,
			Residual: func(f, x []float64) error { return ev.Residual(f, x, p) },
			ResidualJacobian: func(f, jv, x []float64) error {
				return ev.ResidualJacobian(f, &jacobian.Sparse{Rows: n, Cols: n, RowPtr: pat.RowPtr, ColIdx: pat.ColIdx, Val: jv}, x, p)
			}}, x, nil)
		if err != nil {
			t.Fatalf("%s: %v", path, err)
		}
		g, err := Gains(prog, sys, res.X, p)
		if err != nil {
			t.Fatalf("%s: %v", path, err)
		}
		analysed := 0
		for _, sc := range []Scaling{ScaleNone, ScaleSpan, ScaleNominal} {
			for _, maxP := range []int{0, -1} {
				if checkBrief(t, filepath.Base(path)+" "+sc.String(), g, Options{Scaling: sc, MaxPairings: maxP}) != nil {
					analysed++
				}
			}
		}
		if analysed == 0 {
			t.Errorf("%s: no scaling could be analysed", path)
		}
	}
}
