package interact

import (
	"math"
	"math/rand/v2"
	"testing"

	"gonum.org/v1/gonum/mat"
)

var analysisSink *Analysis

// benchGains is the gain set the benchmarks analyse: a seeded random n×n K
// made diagonally dominant, with nd random disturbance columns.
func benchGains(n, nd int) *GainSet {
	rnd := rand.New(rand.NewPCG(uint64(n), 1))
	k := randMatrix(rnd, n, n)
	for i := 0; i < n; i++ {
		k.Set(i, i, k.At(i, i)+2)
	}
	g := gainSet(k, names4(n, "y"), names4(n, "u"))
	if nd > 0 {
		g.Kd = randMatrix(rnd, n, nd)
		g.Disturbances = make([]Signal, nd)
		for d, name := range names4(nd, "d") {
			g.Disturbances[d] = Signal{Name: name, Span: 1, Nominal: 1}
		}
	}
	return g
}

func analyzeBench(b *testing.B, n, nd int, opts *Options) {
	g := benchGains(n, nd)
	b.ReportAllocs()
	for b.Loop() {
		a, err := Analyze(g, opts)
		if err != nil {
			b.Fatal(err)
		}
		analysisSink = a
	}
}

// analyzerBench is analyzeBench with one Analyzer for every call, as an
// envelope sweep uses it.
func analyzerBench(b *testing.B, n, nd int, opts *Options) {
	g := benchGains(n, nd)
	z := NewAnalyzer(opts)
	b.ReportAllocs()
	for b.Loop() {
		a, err := z.Analyze(g)
		if err != nil {
			b.Fatal(err)
		}
		analysisSink = a
	}
}

// briefOpts are the options of an envelope sweep.
var briefOpts = &Options{Brief: true, MaxPairings: -1}

func BenchmarkAnalyze2(b *testing.B) { analyzeBench(b, 2, 0, nil) }
func BenchmarkAnalyze3(b *testing.B) { analyzeBench(b, 3, 0, nil) }
func BenchmarkAnalyze4(b *testing.B) { analyzeBench(b, 4, 0, nil) }
func BenchmarkAnalyze8(b *testing.B) { analyzeBench(b, 8, 0, nil) }

func BenchmarkAnalyzeBrief2(b *testing.B)   { analyzeBench(b, 2, 0, briefOpts) }
func BenchmarkAnalyzeBrief3(b *testing.B)   { analyzeBench(b, 3, 0, briefOpts) }
func BenchmarkAnalyzeBrief4(b *testing.B)   { analyzeBench(b, 4, 0, briefOpts) }
func BenchmarkAnalyzeBrief8(b *testing.B)   { analyzeBench(b, 8, 0, briefOpts) }
func BenchmarkAnalyzeBrief2Kd(b *testing.B) { analyzeBench(b, 2, 2, briefOpts) }
func BenchmarkAnalyzeBrief4Kd(b *testing.B) { analyzeBench(b, 4, 2, briefOpts) }

func BenchmarkAnalyzerBrief2(b *testing.B)   { analyzerBench(b, 2, 0, briefOpts) }
func BenchmarkAnalyzerBrief3(b *testing.B)   { analyzerBench(b, 3, 0, briefOpts) }
func BenchmarkAnalyzerBrief4(b *testing.B)   { analyzerBench(b, 4, 0, briefOpts) }
func BenchmarkAnalyzerBrief8(b *testing.B)   { analyzerBench(b, 8, 0, briefOpts) }
func BenchmarkAnalyzerBrief2Kd(b *testing.B) { analyzerBench(b, 2, 2, briefOpts) }
func BenchmarkAnalyzerBrief4Kd(b *testing.B) { analyzerBench(b, 4, 2, briefOpts) }

var garbageSink []byte

// BenchmarkAnalyzerBrief2Sweep analyses 2x2 gain sets as an envelope sweep
// does (interact/sweep's worker): the sweep's options, the same signal
// lists with a K that changes smoothly from point to point, and between calls the
// garbage the rest of a sweep point makes, kept alive for a while, so that
// the collector runs, with its write barrier on, part of the time, as it
// does in a sweep.
func BenchmarkAnalyzerBrief2Sweep(b *testing.B) {
	sweepBench(b, &Options{Brief: true, MaxPairings: -1})
}

// BenchmarkAnalyzerBrief2SweepNoDirections is BenchmarkAnalyzerBrief2Sweep
// with Options.NoDirections, as a sweep that reads no directions can set it.
func BenchmarkAnalyzerBrief2SweepNoDirections(b *testing.B) {
	sweepBench(b, &Options{Brief: true, MaxPairings: -1, NoDirections: true})
}

func sweepBench(b *testing.B, opts *Options) {
	// Neighbouring points of a sweep: K moves smoothly, by up to 20 %.
	k0 := benchGains(2, 0).K
	ks := make([]*mat.Dense, 256)
	for t := range ks {
		k := mat.NewDense(2, 2, nil)
		for i := 0; i < 2; i++ {
			for j := 0; j < 2; j++ {
				k.Set(i, j, k0.At(i, j)*(1+0.2*math.Sin(2*math.Pi*float64(t)/float64(len(ks))+float64(2*i+j))))
			}
		}
		ks[t] = k
	}
	g := gainSet(ks[0], names4(2, "y"), names4(2, "u"))
	g.Source = "model"
	z := NewAnalyzer(opts)
	live := make([][]byte, 1<<14)
	b.ReportAllocs()
	for i := 0; b.Loop(); i++ {
		g.K = ks[i%len(ks)]
		a, err := z.Analyze(g)
		if err != nil {
			b.Fatal(err)
		}
		analysisSink = a
		live[i%len(live)] = make([]byte, 64)
	}
	garbageSink = live[0]
}
