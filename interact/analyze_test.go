package interact

import (
	"fmt"
	"math/rand/v2"
	"reflect"
	"slices"
	"strings"
	"testing"

	"gonum.org/v1/gonum/mat"
)

func gainSet(k *mat.Dense, outs, ins []string) *GainSet {
	g := &GainSet{K: k, Source: "test"}
	for _, n := range outs {
		g.Outputs = append(g.Outputs, Signal{Name: n})
	}
	for _, n := range ins {
		g.Inputs = append(g.Inputs, Signal{Name: n})
	}
	return g
}

func TestAnalyzeWoodBerry(t *testing.T) {
	// checkvalues §1 (Wood & Berry 1973): λ11 = 2.0094, NI = 0.49766, γ* = 5.8671.
	a, err := Analyze(gainSet(woodBerry, []string{"xD", "xB"}, []string{"R", "S"}), nil)
	if err != nil {
		t.Fatal(err)
	}
	if len(a.Pairings) != 2 || a.Screened != 2 || a.Rejected != 1 {
		t.Fatalf("pairings %d screened %d rejected %d", len(a.Pairings), a.Screened, a.Rejected)
	}
	best, worst := a.Pairings[0], a.Pairings[1]
	if !slices.Equal(best.Pairs, Pairing{0, 1}) || best.Verdict != Acceptable {
		t.Errorf("best = %v (%v), want xD-R, xB-S acceptable", best.Label, best.Verdict)
	}
	if !near(best.Lambdas[0], 2.0094, 5e-5) || !near(best.Niederlinski, 0.49766, 1e-5) {
		t.Errorf("λ = %v, NI = %g", best.Lambdas, best.Niederlinski)
	}
	if !near(a.MinCond, 5.8671, 2e-5) || !near(a.SVD.Cond, 7.4806, 2e-5) {
		t.Errorf("γ* = %g, γ = %g", a.MinCond, a.SVD.Cond)
	}
	if worst.Verdict != Rejected || !strings.Contains(worst.Reasons[0], "xD paired with S has λ = -1.009 < 0: the loop's gain changes sign when the other loops close") {
		t.Errorf("off-diagonal: %v %q", worst.Verdict, worst.Reasons)
	}
	if a.Caution != Caution {
		t.Error("Caution missing")
	}
}

func TestAnalyzeColumnA(t *testing.T) {
	// checkvalues §2c (SP Ex. 3.11): λ11 = 35.0688, γ* = 138.26799 > 50.
	a, err := Analyze(gainSet(colaLV, []string{"yD", "xB"}, []string{"L", "V"}), nil)
	if err != nil {
		t.Fatal(err)
	}
	best := a.Pairings[0]
	if best.Verdict != Cautioned || !slices.Equal(best.Pairs, Pairing{0, 1}) {
		t.Fatalf("best %v %v", best.Label, best.Verdict)
	}
	if len(a.Notes) != 1 || !strings.Contains(a.Notes[0], "γ* = 138.3 > 50") {
		t.Errorf("notes %q", a.Notes)
	}
	if !strings.Contains(best.Reasons[0], "yD paired with L has λ = 35.07 > 4") {
		t.Errorf("reasons %q", best.Reasons)
	}
	// Score: RGA number (138.27522 - 2, checkvalues §2c) + 2 cautions × 2.
	if !near(best.Score, 138.27522-2+4, 1e-6) {
		t.Errorf("score %g", best.Score)
	}
}

func TestAnalyzeBlending(t *testing.T) {
	for _, tc := range []struct {
		name string
		k    *mat.Dense
		outs []string
		ins  []string
		want string
		src  string
	}{
		// checkvalues §3, BEQ Ex. 13.1 [V]: "the largest component stream
		// flow rate then controls the total flow": F with F1, z with water.
		{"BEQ", mat.NewDense(2, 2, []float64{0.025, -0.075, 1, 1}), []string{"z", "F"}, []string{"F1", "F2"}, "z-F2, F-F1", "BEQ Sec. 13.6"},
		// checkvalues §3, SP Ex. 3.9 [C]: pair F with water, x with sugar.
		{"SP", mat.NewDense(2, 2, []float64{1, 1, 0.4, -0.1}), []string{"F", "x"}, []string{"sugar", "water"}, "F-water, x-sugar", "SP Ex. 3.9"},
	} {
		a, err := Analyze(gainSet(tc.k, tc.outs, tc.ins), nil)
		if err != nil {
			t.Fatal(err)
		}
		if got := a.Pairings[0]; got.Label != tc.want || got.Verdict != Recommended {
			t.Errorf("%s (%s): best %q %v, want %q recommended", tc.name, tc.src, got.Label, got.Verdict, tc.want)
		}
	}
}

func TestAnalyzeNonSquare(t *testing.T) {
	// checkvalues §4 "non-square example 1", SP Ex. 10.2 [V]: choose outputs 1 and 4.
	g := mat.NewDense(6, 2, []float64{10, 10, 10, 9, 2, 1, 2, -1, 2, 2, 0, 2})
	a, err := Analyze(gainSet(g, []string{"y1", "y2", "y3", "y4", "y5", "y6"}, []string{"u1", "u2"}), nil)
	if err != nil {
		t.Fatal(err)
	}
	if a.Selection == nil || !a.Selection.Outputs {
		t.Fatal("no output selection")
	}
	if !slices.Equal(a.OutputIndex, []int{0, 3}) || !slices.Equal(a.Selection.Kept, []int{3, 0}) {
		t.Errorf("kept %v (index %v), want outputs 1 and 4", a.Selection.Kept, a.OutputIndex)
	}
	if !strings.Contains(a.Selection.Reasons[0], "Kept y4 (0.6134), y1 (0.5252); dropped y2 (0.4734)") {
		t.Errorf("reasons %q", a.Selection.Reasons)
	}
	// checkvalues §4: σ_min(G_14) = 2.12 [V].
	if s := a.SVD.Values[1]; !near(s, 2.12, 3e-3) {
		t.Errorf("σmin of kept system = %g, want 2.12", s)
	}
	// More inputs than outputs: the transpose selects inputs.
	var gt mat.Dense
	gt.CloneFrom(g.T())
	b, err := Analyze(gainSet(&gt, []string{"y1", "y2"}, []string{"u1", "u2", "u3", "u4", "u5", "u6"}), nil)
	if err != nil {
		t.Fatal(err)
	}
	if b.Selection.Outputs || !slices.Equal(b.InputIndex, []int{0, 3}) {
		t.Errorf("input selection %v", b.InputIndex)
	}
}

func TestAnalyzeDisturbanceCaution(t *testing.T) {
	// Hand case of TestRDGByHand scaled up: K = [2 1; 1 1], kd = [3; 1] gives
	// β = (-1/3, 2) for the off-diagonal pairing; with kd = [3; 0.2] the
	// diagonal pairing has β2 = 1·(-2.6... ) computed below by the formula.
	g := gainSet(mat.NewDense(2, 2, []float64{2, 1, 1, 1}), []string{"y1", "y2"}, []string{"u1", "u2"})
	g.Disturbances = []Signal{{Name: "d"}}
	g.Kd = mat.NewDense(2, 1, []float64{3, 0.2})
	// K⁻¹kd = [2.8; -2.6]; diagonal β2 = 1·(-2.6)/0.2 = -13 -> caution.
	a, err := Analyze(g, &Options{MaxPairings: -1})
	if err != nil {
		t.Fatal(err)
	}
	var diag PairingResult
	for _, r := range a.Pairings {
		if slices.Equal(r.Pairs, Pairing{0, 1}) {
			diag = r
		}
	}
	if !near(diag.RDG.At(1, 0), -13, 1e-12) || diag.Verdict != Cautioned {
		t.Fatalf("β = %v verdict %v", diag.RDG.RawMatrix().Data, diag.Verdict)
	}
	if !strings.Contains(strings.Join(diag.Reasons, "\n"), "Disturbance d: relative disturbance gain β = -13 on y2") {
		t.Errorf("reasons %q", diag.Reasons)
	}
}

func TestAnalyzeIntegrityCaution(t *testing.T) {
	// A 4x4 found by a search over half-integer couplings around the block
	// [1 2; 1 1] (NI -1): the diagonal pairing has λ = 2, 0.6, 0.8, 0.8
	// and NI = 1.25 (passes), but the loops {a,b} alone have NI = -1.
	k := mat.NewDense(4, 4, []float64{
		1, 2, -0.5, -0.5,
		1, 1, -1, 0.5,
		-1, 1, 1, 0.5,
		1, -0.5, -1, 1,
	})
	var fails int
	for _, c := range Integrity(k, Pairing{0, 1, 2, 3}) {
		if c.Fails {
			fails++
		}
	}
	a, err := Analyze(gainSet(k, []string{"a", "b", "c", "d"}, []string{"p", "q", "r", "s"}), &Options{MaxPairings: -1})
	if err != nil {
		t.Fatal(err)
	}
	found := false
	for _, r := range a.Pairings {
		if !slices.Equal(r.Pairs, Pairing{0, 1, 2, 3}) {
			continue
		}
		found = true
		if !near(r.Niederlinski, 1.25, 1e-12) {
			t.Errorf("NI = %g, want 1.25", r.Niederlinski)
		}
		if len(r.Integrity) != fails || fails == 0 {
			t.Errorf("integrity failures %d, Integrity says %d", len(r.Integrity), fails)
		}
		if r.Verdict != Cautioned || !strings.Contains(strings.Join(r.Reasons, "\n"), "with c, d in manual, the loops a-p, b-q left in automatic fail: NI = -1 < 0") {
			t.Errorf("verdict %v reasons %q", r.Verdict, r.Reasons)
		}
	}
	if !found {
		t.Error("diagonal pairing missing from the full ranking")
	}
}

func TestAnalyzeTopNMatchesFull(t *testing.T) {
	rnd := rand.New(rand.NewPCG(9, 9))
	for trial := 0; trial < 5; trial++ {
		n := 4 + trial%2
		g := gainSet(randMatrix(rnd, n, n), names4(n, "y"), names4(n, "u"))
		all, err := Analyze(g, &Options{MaxPairings: -1})
		if err != nil {
			t.Fatal(err)
		}
		top, err := Analyze(g, &Options{MaxPairings: 5})
		if err != nil {
			t.Fatal(err)
		}
		if len(all.Pairings) != factorial(n) {
			t.Fatalf("all: %d results", len(all.Pairings))
		}
		if !reflect.DeepEqual(all.Pairings[:5], top.Pairings) {
			t.Errorf("trial %d: lazy top-5 differs from the full ranking", trial)
		}
		for i := 1; i < len(all.Pairings); i++ {
			if compareResults(all.Pairings[i-1], all.Pairings[i]) > 0 {
				t.Fatalf("trial %d: not sorted at %d", trial, i)
			}
		}
	}
}

func TestAnalyzeLargeUsesMurty(t *testing.T) {
	rnd := rand.New(rand.NewPCG(10, 10))
	n := 9
	k := randMatrix(rnd, n, n)
	for i := 0; i < n; i++ {
		k.Set(i, i, k.At(i, i)+4) // diagonal dominance: a clear best pairing
	}
	a, err := Analyze(gainSet(k, names4(n, "y"), names4(n, "u")), &Options{MaxPairings: 3})
	if err != nil {
		t.Fatal(err)
	}
	if !strings.Contains(a.Method, "9! pairings are too many") || a.Screened != 50 || len(a.Pairings) != 3 {
		t.Errorf("method %q screened %d results %d", a.Method, a.Screened, len(a.Pairings))
	}
	// Brute force over all 9! pairings of the RGA number agrees on the best.
	bestP, bestV := Pairing(nil), 0.0
	for p := range Pairings(n) {
		if v := RGANumber(a.RGA, p); bestP == nil || v < bestV {
			bestP, bestV = slices.Clone(p), v
		}
	}
	if !slices.Equal(a.Pairings[0].Pairs, bestP) {
		t.Errorf("best %v, brute force %v", a.Pairings[0].Pairs, bestP)
	}
}

func TestAnalyzeErrors(t *testing.T) {
	for _, tc := range []struct {
		name string
		g    *GainSet
		opts *Options
		want string
	}{
		{"singular", gainSet(mat.NewDense(2, 2, []float64{1, 2, 2, 4}), []string{"a", "b"}, []string{"c", "d"}), nil, "interact: the gain matrix K (a, b by c, d) is singular"},
		{"no span", gainSet(woodBerry, []string{"xD", "xB"}, []string{"R", "S"}), &Options{Scaling: ScaleSpan}, `interact: span scaling needs a positive span for output "xD": give it a span`},
		{"empty", &GainSet{K: &mat.Dense{}}, nil, "interact: the gain set from the caller has 0 outputs and 0 inputs"},
	} {
		_, err := Analyze(tc.g, tc.opts)
		if err == nil || !strings.HasPrefix(err.Error(), tc.want) {
			t.Errorf("%s: err = %v, want %q", tc.name, err, tc.want)
		}
	}
}

func TestScaled(t *testing.T) {
	// checkvalues §2b: scaled = unscaled × (1 kmol/min)/(0.01) for column A.
	g := gainSet(colaLVUnscaled, []string{"yD", "xB"}, []string{"L", "V"})
	for i := range g.Outputs {
		g.Outputs[i].Span = 0.01
	}
	for j := range g.Inputs {
		g.Inputs[j].Span = 1
	}
	k, kd, err := g.Scaled(ScaleSpan)
	if err != nil || kd != nil {
		t.Fatal(err)
	}
	if !mat.EqualApprox(k, colaLV, 1e-9) {
		t.Errorf("span-scaled %v, want %v (SP eq. 3.45)", mat.Formatted(k), mat.Formatted(colaLV))
	}
	g.Outputs[1].Nominal, g.Outputs[0].Nominal = 0.01, 0.99
	g.Inputs[0].Nominal, g.Inputs[1].Nominal = 2.70629, 3.20629
	k, _, err = g.Scaled(ScaleNominal)
	if err != nil || !near(k.At(1, 1), -1.096*3.20629/0.01, 1e-12) {
		t.Errorf("nominal scaling: %v %v", err, k)
	}
	for _, s := range []Scaling{ScaleNone, ScaleSpan, ScaleNominal} {
		if p, err := ParseScaling(s.String()); err != nil || p != s {
			t.Errorf("ParseScaling(%q) = %v, %v", s, p, err)
		}
	}
	if _, err := ParseScaling("log"); err == nil {
		t.Error("ParseScaling(log): no error")
	}
}

func names4(n int, prefix string) []string {
	out := make([]string, n)
	for i := range out {
		out[i] = fmt.Sprintf("%s%d", prefix, i+1)
	}
	return out
}

func TestAnalyzeSingleLoop(t *testing.T) {
	a, err := Analyze(gainSet(mat.NewDense(1, 1, []float64{-3}), []string{"T"}, []string{"steam"}), nil)
	if err != nil {
		t.Fatal(err)
	}
	if len(a.Pairings) != 1 || a.Pairings[0].Verdict != Recommended || a.MinCond != 1 || a.Pairings[0].Label != "T-steam" {
		t.Errorf("%+v", a.Pairings)
	}
}

// TestRoundoffLambdaIsZero: a gain that is zero but for rounding must not
// decide the sign screen (common practice: treat |λ| below rounding as 0).
func TestRoundoffLambdaIsZero(t *testing.T) {
	// A mixer whose first output does not depend on the second input: the
	// (1,2) gain is 1e-18 instead of 0, as the implicit-function theorem
	// can leave it.
	g := &GainSet{
		Outputs: []Signal{{Name: "a"}, {Name: "b"}},
		Inputs:  []Signal{{Name: "u"}, {Name: "v"}},
		K:       mat.NewDense(2, 2, []float64{2, -1e-18, 1, 3}),
	}
	a, err := Analyze(g, nil)
	if err != nil {
		t.Fatal(err)
	}
	if l := a.RGA.At(0, 1); l != 0 {
		t.Errorf("λ12 = %g, want exactly 0", l)
	}
	best := a.Pairings[0]
	if best.Label != "a-u, b-v" || best.Verdict == Rejected {
		t.Errorf("best pairing %s (%v), want a-u, b-v not rejected", best.Label, best.Verdict)
	}
	if last := a.Pairings[len(a.Pairings)-1]; last.Verdict != Rejected {
		t.Errorf("pairing %s on the zero relative gains is %v, want rejected", last.Label, last.Verdict)
	}
}
