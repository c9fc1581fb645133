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
