package interact

import (
	"math/rand/v2"
	"testing"
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
