package interact

import (
	"math/rand/v2"
	"testing"
)

var analysisSink *Analysis

func analyzeBench(b *testing.B, n int) {
	rnd := rand.New(rand.NewPCG(uint64(n), 1))
	k := randMatrix(rnd, n, n)
	for i := 0; i < n; i++ {
		k.Set(i, i, k.At(i, i)+2)
	}
	g := gainSet(k, names4(n, "y"), names4(n, "u"))
	b.ReportAllocs()
	for b.Loop() {
		a, err := Analyze(g, nil)
		if err != nil {
			b.Fatal(err)
		}
		analysisSink = a
	}
}

func BenchmarkAnalyze2(b *testing.B) { analyzeBench(b, 2) }
func BenchmarkAnalyze4(b *testing.B) { analyzeBench(b, 4) }
func BenchmarkAnalyze8(b *testing.B) { analyzeBench(b, 8) }
