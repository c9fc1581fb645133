package interact

import (
	"fmt"
	"math"
	"math/rand/v2"
	"strings"
	"testing"

	"gonum.org/v1/gonum/mat"
)

// svd2ValuesOf gives svd2Of's singular values bit for bit, and reports
// false exactly when svd2Of does: on seeded hard 2x2s of every kind,
// rank-one and triangular ones (a zero value, which takes svd2Of's own
// path), and tiny and huge entries.
func TestSVD2ValuesOfSameAsSVD2Of(t *testing.T) {
	rnd := rand.New(rand.NewPCG(2026, 11))
	check := func(k [4]float64) {
		t.Helper()
		var want, got [2]float64
		var u, v [4]float64
		okW := svd2Of(&want, &u, &v, k[0], k[1], k[2], k[3])
		okG := svd2ValuesOf(&got, k[0], k[1], k[2], k[3])
		if okW != okG || math.Float64bits(got[0]) != math.Float64bits(want[0]) || math.Float64bits(got[1]) != math.Float64bits(want[1]) {
			t.Fatalf("K = %v: values %v (%v), svd2Of %v (%v)", k, got, okG, want, okW)
		}
	}
	for trial := 0; trial < 200000; trial++ {
		var k [4]float64
		copy(k[:], hardMatrix(rnd, 2, 2, trial).RawMatrix().Data)
		switch trial % 7 {
		case 0: // rank one: a zero (or tiny) singular value
			a, b, c := rnd.NormFloat64(), rnd.NormFloat64(), rnd.NormFloat64()
			k = [4]float64{a, b, c * a, c * b}
		case 1: // triangular, either way, and diagonal
			k[rnd.IntN(2)+1] = 0
			if rnd.IntN(3) == 0 {
				k[1], k[2] = 0, 0
			}
		case 2: // tiny or huge entries
			k[rnd.IntN(4)] *= []float64{1e-300, 1e300, 1e-160, 0x1p-1074}[rnd.IntN(4)]
		}
		if k == [4]float64{} {
			continue
		}
		check(k)
	}
}

// With Options.NoDirections an analysis leaves out SVD.U, SVD.V,
// Sensitivity, Dl and Dr (nil), and everything else is what it is without
// the option, bit for bit and word for word, with the same errors: for
// seeded 2x2 gain sets of every hard kind (the fast brief route of an
// Analyzer, and the general route of the package function), some 3x3 and
// other shapes, with and without disturbances and scalings.
func TestNoDirectionsSameNumbers(t *testing.T) {
	optSets := []Options{
		{Brief: true, MaxPairings: -1},
		{Brief: true, MaxPairings: -1, Scaling: ScaleSpan},
		{Brief: true, MaxPairings: -1, Thresholds: Thresholds{CondHigh: 5}},
		{Brief: true, MaxPairings: 1},
		{MaxPairings: 0},
		{MaxPairings: -1, Scaling: ScaleNominal, Thresholds: Thresholds{LambdaLow: 0.8, GoodLow: 0.95}},
	}
	rnd := rand.New(rand.NewPCG(2026, 12))
	for _, opts := range optSets {
		with := opts
		with.NoDirections = true
		zw, zo := NewAnalyzer(&with), NewAnalyzer(&opts)
		for trial := 0; trial < trialCount(800); trial++ {
			var g *GainSet
			switch r := rnd.IntN(20); {
			case r == 0:
				g = randomGainSet(rnd, trial) // any shape
			case r <= 2:
				g = gainSet(hardMatrix(rnd, 3, 3, trial), names4(3, "y"), names4(3, "u"))
			default:
				g = gainSet(hardMatrix(rnd, 2, 2, trial), names4(2, "y"), names4(2, "u"))
			}
			for i := range g.Outputs {
				g.Outputs[i].Span = 0.5 + rnd.Float64()
			}
			for j := range g.Inputs {
				g.Inputs[j].Span = 0.5 + rnd.Float64()
			}
			if g.Kd == nil && rnd.IntN(8) == 0 {
				g.Kd = randMatrix(rnd, len(g.Outputs), 1)
				g.Disturbances = []Signal{{Name: "d", Span: 1, Nominal: 1}}
			}
			want, errW := zo.Analyze(g)
			var bw strings.Builder
			if errW == nil {
				bitsOf(&bw, withoutDirections(want))
			}
			for route, analyse := range []func() (*Analysis, error){
				func() (*Analysis, error) { return zw.Analyze(g) },
				func() (*Analysis, error) { return Analyze(g, &with) },
			} {
				got, errG := analyse()
				what := fmt.Sprintf("%+v, trial %d, route %d (%v)", opts, trial, route, g.K.RawMatrix().Data)
				if (errW == nil) != (errG == nil) || (errW != nil && errW.Error() != errG.Error()) {
					t.Fatalf("%s: error %v, without the option %v", what, errG, errW)
				}
				if errG != nil {
					continue
				}
				if got.Sensitivity != nil || got.Dl != nil || got.Dr != nil || got.SVD == nil || got.SVD.U != nil || got.SVD.V != nil {
					t.Fatalf("%s: Sensitivity %v, Dl %v, Dr %v, SVD %+v: want them nil (but the SVD)", what, got.Sensitivity, got.Dl, got.Dr, got.SVD)
				}
				var bg strings.Builder
				bitsOf(&bg, got)
				if bg.String() != bw.String() {
					t.Fatalf("%s:\n%s\nwithout the option:\n%s", what, bg.String(), bw.String())
				}
			}
		}
	}
}

// withoutDirections is a copy of a with what NoDirections leaves out set
// to nil.
func withoutDirections(a *Analysis) *Analysis {
	c := *a
	c.Sensitivity, c.Dl, c.Dr = nil, nil, nil
	if a.SVD != nil {
		c.SVD = &SVDResult{Values: a.SVD.Values, Cond: a.SVD.Cond}
	}
	return &c
}

// The dropped fields are really computed without the option: the test
// above compares something.
func TestNoDirectionsOnlyDropsWithOption(t *testing.T) {
	g := gainSet(mat.NewDense(2, 2, []float64{2, 1, 1, 3}), names4(2, "y"), names4(2, "u"))
	for _, opts := range []Options{{Brief: true, MaxPairings: -1}, {}} {
		a, err := NewAnalyzer(&opts).Analyze(g)
		if err != nil {
			t.Fatal(err)
		}
		if a.Sensitivity == nil || a.Dl == nil || a.Dr == nil || a.SVD.U == nil || a.SVD.V == nil {
			t.Errorf("%+v: a field is nil without NoDirections: %+v", opts, a)
		}
	}
}
