package interact

import (
	"crypto/sha256"
	"flag"
	"fmt"
	"math"
	"math/rand/v2"
	"os"
	"path/filepath"
	"runtime"
	"strings"
	"testing"

	"gonum.org/v1/gonum/mat"
)

var update = flag.Bool("update", false, "rewrite the golden files in testdata")

// bitsOf writes every number of a (as bits), every word and the shape of
// every slice and matrix to b, for comparing analyses bit for bit.
func bitsOf(b *strings.Builder, a *Analysis) {
	f := func(v float64) { fmt.Fprintf(b, " %x", math.Float64bits(v)) }
	fs := func(what string, v []float64) {
		fmt.Fprintf(b, " %s%d:", what, len(v))
		for _, x := range v {
			f(x)
		}
	}
	dense := func(what string, d *mat.Dense) {
		if d == nil {
			fmt.Fprintf(b, " %s:nil", what)
			return
		}
		r, c := d.Dims()
		fmt.Fprintf(b, " %s%dx%d:", what, r, c)
		for i := 0; i < r; i++ {
			for j := 0; j < c; j++ {
				f(d.At(i, j))
			}
		}
	}
	fmt.Fprintf(b, "%q %v %q %v %v %v %v %v", a.Source, a.Scaling, a.Caution, names(a.Outputs), names(a.Inputs), names(a.Disturbances), a.OutputIndex, a.InputIndex)
	dense("K", a.K)
	dense("Kd", a.Kd)
	fmt.Fprintf(b, " sel:%v", a.Selection != nil)
	dense("RGA", a.RGA)
	dense("S", a.Sensitivity)
	f(a.Det)
	if a.SVD != nil {
		fs("sv", a.SVD.Values)
		dense("U", a.SVD.U)
		dense("V", a.SVD.V)
		f(a.SVD.Cond)
	}
	f(a.MinCond)
	fs("Dl", a.Dl)
	fs("Dr", a.Dr)
	fmt.Fprintf(b, " %q %d %d %q (%v)", a.Method, a.Screened, a.Rejected, a.Notes, a.Notes == nil)
	for _, r := range a.Pairings {
		fmt.Fprintf(b, "\n  %v %q", r.Pairs, r.Label)
		fs("l", r.Lambdas)
		f(r.Niederlinski)
		f(r.RGANumber)
		f(r.Score)
		fmt.Fprintf(b, " %v %q (%v) %v", r.Verdict, r.Reasons, r.Reasons == nil, len(r.Integrity))
		dense("RDG", r.RDG)
	}
	b.WriteByte('\n')
}

// The 2x2 analyses stay what they were, bit for bit: digests of every
// number, word and shape of the analyses of 6000 seeded random 2x2 gain
// sets (hardMatrix's kinds), for the options of an envelope sweep (brief,
// every pairing, unscaled and span-scaled) and of a full report with
// disturbances, each by an Analyzer reused across the gain sets. The
// golden digests were recorded on amd64 (go test -run Bits2 -update); other
// architectures may fuse multiply-adds that amd64 rounds twice, so the test
// runs on amd64 only.
func TestAnalyzerBits2Golden(t *testing.T) {
	if runtime.GOARCH != "amd64" {
		t.Skip("the digests were recorded on amd64")
	}
	optSets := []Options{
		{Brief: true, MaxPairings: -1},
		{Brief: true, MaxPairings: -1, Scaling: ScaleSpan},
		{MaxPairings: 0, Thresholds: Thresholds{CondHigh: 5}},
	}
	zs := make([]*Analyzer, len(optSets))
	for i := range optSets {
		zs[i] = NewAnalyzer(&optSets[i])
	}
	rnd := rand.New(rand.NewPCG(2026, 2))
	const trials, block = 6000, 500
	var out strings.Builder
	var b strings.Builder
	for trial := 0; trial < trials; trial++ {
		k := hardMatrix(rnd, 2, 2, trial)
		g := gainSet(k, names4(2, "y"), names4(2, "u"))
		for i := 0; i < 2; i++ {
			g.Outputs[i].Span = 0.5 + rnd.Float64()
			g.Inputs[i].Span = 0.5 + rnd.Float64()
		}
		for o, z := range zs {
			if o == 2 {
				g.Kd = randMatrix(rnd, 2, 1)
				g.Disturbances = []Signal{{Name: "d", Span: 1, Nominal: 1}}
			}
			fmt.Fprintf(&b, "%d/%d ", trial, o)
			a, err := z.Analyze(g)
			if err != nil {
				fmt.Fprintf(&b, "error %v\n", err)
				continue
			}
			bitsOf(&b, a)
		}
		if (trial+1)%block == 0 {
			fmt.Fprintf(&out, "trials %d-%d: %x\n", trial+1-block, trial, sha256.Sum256([]byte(b.String())))
			b.Reset()
		}
	}
	path := filepath.Join("testdata", "analyzer2-bits.golden")
	if *update {
		if err := os.MkdirAll("testdata", 0o755); err != nil {
			t.Fatal(err)
		}
		if err := os.WriteFile(path, []byte(out.String()), 0o644); err != nil {
			t.Fatal(err)
		}
		return
	}
	want, err := os.ReadFile(path)
	if err != nil {
		t.Fatal(err)
	}
	if got := out.String(); got != string(want) {
		t.Errorf("the 2x2 analyses changed:\n%s\nwant\n%s", got, want)
	}
}

// The fast route of a 2x2 brief analysis (Analyzer.brief2, storing only
// what is not in place) gives what the general route gives (the package
// function Analyze, fresh storage), bit for bit and word for word, and the
// same errors: with the sweep's options and span scaling, for 2x2 gain
// sets mixed with other shapes, non-finite and singular ones (which move
// the reused storage around), and with the previous results scribbled on
// between calls as a careless caller might.
func TestBrief2SameAsGeneral(t *testing.T) {
	rnd := rand.New(rand.NewPCG(2026, 3))
	// What a caller may do to the results it was lent, one field at a
	// time, and a few at once: the next call must not depend on it.
	scribbles := []func(a *Analysis){
		func(a *Analysis) { a.Pairings[0], a.Pairings[1] = a.Pairings[1], a.Pairings[0] },
		func(a *Analysis) { a.RGA, a.SVD, a.Dl, a.OutputIndex = nil, nil, nil, nil },
		func(a *Analysis) { a.Pairings[0].Pairs[0], a.Pairings[1].Lambdas[1] = 7, 99 },
		func(a *Analysis) { a.Pairings[1].Pairs, a.Pairings[0].Reasons = nil, []string{"x"} },
		func(a *Analysis) { a.Pairings, a.Method, a.Notes, a.Source = a.Pairings[:1], "x", []string{"x"}, "x" },
		func(a *Analysis) { a.Pairings[1].Label = "x" },
		func(a *Analysis) { a.Pairings[0].Reasons = []string{} },
		func(a *Analysis) { a.Pairings[1].Integrity = []SubsystemCheck{{}} },
		func(a *Analysis) { a.Pairings[0].RDG = new(mat.Dense) },
		func(a *Analysis) { a.Pairings[0].Lambdas = a.Pairings[0].Lambdas[:1] },
		func(a *Analysis) { a.Pairings[1].Pairs = a.Pairings[0].Pairs },
		func(a *Analysis) { a.Pairings[1].Lambdas = a.Pairings[1].Lambdas[1:] },
		func(a *Analysis) { a.InputIndex = a.InputIndex[1:] },
		func(a *Analysis) { a.OutputIndex[1] = 5 },
		func(a *Analysis) { a.K, a.Kd = nil, new(mat.Dense) },
		func(a *Analysis) { a.Outputs, a.Inputs, a.Disturbances = nil, a.Outputs, a.Inputs },
		func(a *Analysis) { a.Selection = &Selection{} },
		func(a *Analysis) { a.Dr = a.Dl },
		func(a *Analysis) { a.Sensitivity, a.RGA = a.RGA, a.Sensitivity },
		func(a *Analysis) { a.Caution, a.Scaling = "", ScaleSpan },
		func(a *Analysis) { a.SVD = &SVDResult{} },
		func(a *Analysis) { a.Screened, a.Rejected, a.Det, a.MinCond = 0, 3, 1, 1 },
		func(a *Analysis) {
			if a.SVD.U == nil { // NoDirections: the SVD's fields are the Analyzer's to repair
				a.SVD.U, a.SVD.Values, a.Sensitivity, a.Dr = new(mat.Dense), nil, new(mat.Dense), []float64{1}
			}
		},
		func(a *Analysis) {
			if a.SVD.V == nil {
				a.SVD.V, a.SVD.Cond = new(mat.Dense), 0
			}
		},
	}
	for _, opts := range []Options{
		{Brief: true, MaxPairings: -1},
		{Brief: true, MaxPairings: 0, Scaling: ScaleSpan, Thresholds: Thresholds{CondHigh: 5}},
		{Brief: true, MaxPairings: -1, Thresholds: Thresholds{LambdaLow: 0.8, LambdaHigh: 1.25, GoodLow: 0.95, GoodHigh: 1.05}},
		{Brief: true, MaxPairings: 2, Scaling: ScaleNominal, Thresholds: Thresholds{LambdaLow: -0.5, GoodLow: 0.2}},
		{Brief: true, MaxPairings: -1, NoDirections: true},
		{Brief: true, MaxPairings: -1, Scaling: ScaleSpan, NoDirections: true, Thresholds: Thresholds{CondHigh: 5}},
	} {
		z := NewAnalyzer(&opts)
		var prev *Analysis
		for trial := 0; trial < trialCount(3000); trial++ {
			var g *GainSet
			switch rnd.IntN(10) {
			case 0:
				g = randomGainSet(rnd, trial) // any shape
			case 1:
				k := hardMatrix(rnd, 2, 2, trial)
				k.Set(rnd.IntN(2), rnd.IntN(2), []float64{math.NaN(), math.Inf(1), 1e-310, 1e300}[rnd.IntN(4)])
				g = gainSet(k, names4(2, "y"), names4(2, "u"))
			default:
				g = gainSet(hardMatrix(rnd, 2, 2, trial), names4(2, "y"), names4(2, "u"))
			}
			for i := range g.Outputs {
				g.Outputs[i].Span = 0.5 + rnd.Float64()
			}
			for j := range g.Inputs {
				g.Inputs[j].Span = 0.5 + rnd.Float64()
			}
			if prev != nil && len(prev.Pairings) == 2 && rnd.IntN(4) != 0 {
				scribbles[rnd.IntN(len(scribbles))](prev)
			}
			want, errW := Analyze(g, &opts)
			got, errG := z.Analyze(g)
			what := fmt.Sprintf("%+v, trial %d (%v)", opts, trial, g.K.RawMatrix().Data)
			if (errW == nil) != (errG == nil) || (errW != nil && errW.Error() != errG.Error()) {
				t.Fatalf("%s: error %v, general route %v", what, errG, errW)
			}
			prev = got
			if errW != nil {
				continue
			}
			var bg, bw strings.Builder
			bitsOf(&bg, got)
			bitsOf(&bw, want)
			if bg.String() != bw.String() {
				t.Fatalf("%s:\n%s\ngeneral route:\n%s", what, bg.String(), bw.String())
			}
		}
	}
}

// in1Range's and in4Range's comparisons of bits are the comparisons of
// numbers they replace.
func TestIn1RangeBits(t *testing.T) {
	if small2Bits != math.Float64bits(small2) || big2Bits != math.Float64bits(1/small2) {
		t.Fatalf("small2Bits %x, big2Bits %x: want %x, %x", small2Bits, big2Bits, math.Float64bits(small2), math.Float64bits(1/small2))
	}
	vals := []float64{0, math.Copysign(0, -1), small2, 1 / small2, math.Nextafter(small2, 0), math.Nextafter(1/small2, math.Inf(1)),
		math.Inf(1), math.Inf(-1), math.NaN(), -math.NaN(), 1, -1, 5e-324, math.MaxFloat64, 0x1p-1022}
	rnd := rand.New(rand.NewPCG(2026, 4))
	for range 10000 {
		vals = append(vals, math.Float64frombits(rnd.Uint64()))
	}
	for _, v := range vals {
		x := math.Abs(v)
		if want := x == 0 || (x >= small2 && x <= 1/small2); in1Range(v) != want {
			t.Errorf("in1Range(%v) = %v, want %v", v, !want, want)
		}
		if in1Range(v) != in2Range(v) {
			t.Errorf("in1Range(%v) disagrees with in2Range", v)
		}
		w := vals[rnd.IntN(len(vals))]
		for _, q := range [][4]float64{{v, 1, 1, 1}, {1, v, 1, 1}, {1, 1, v, 1}, {1, 1, 1, v}, {v, w, 0, 1}, {w, 1, v, -2}} {
			if in4Range(q[0], q[1], q[2], q[3]) != in2Range(q[:]...) {
				t.Errorf("in4Range%v disagrees with in2Range", q)
			}
		}
	}
}
