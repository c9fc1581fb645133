package sparse

import (
	"math/rand/v2"
	"testing"

	"gonum.org/v1/gonum/mat"
)

var (
	sinkLU  *LU
	sinkErr error
)

func BenchmarkFactorizeTridiag41(b *testing.B) { factorBench(b, fromDense(tridiag(41), nil)) }
func BenchmarkRefactorTridiag41(b *testing.B)  { refactorBench(b, fromDense(tridiag(41), nil)) }
func BenchmarkDenseLUTridiag41(b *testing.B)   { denseBench(b, fromDense(tridiag(41), nil)) }

func BenchmarkFactorizeBlockTridiag200x4(b *testing.B) { factorBench(b, blockTridiag200x4()) }
func BenchmarkRefactorBlockTridiag200x4(b *testing.B)  { refactorBench(b, blockTridiag200x4()) }

// The sparse mode on the same matrices, for the band rule.
func BenchmarkRefactorSparseTridiag41(b *testing.B) {
	refactorBenchOpts(b, fromDense(tridiag(41), nil), &Options{sparseOnly: true})
}
func BenchmarkRefactorSparseBlockTridiag200x4(b *testing.B) {
	refactorBenchOpts(b, blockTridiag200x4(), &Options{sparseOnly: true})
}
func BenchmarkDenseLUBlockTridiag200x4(b *testing.B) { denseBench(b, blockTridiag200x4()) }

func blockTridiag200x4() *CSR {
	return fromDense(blockTridiag(rand.New(rand.NewPCG(1, 1)), 200, 4), nil)
}

// factorBench: analysis, pivot choice and numeric factorisation, then one solve.
func factorBench(b *testing.B, a *CSR) {
	x := make([]float64, a.Rows)
	b.ReportAllocs()
	for b.Loop() {
		sinkLU, sinkErr = Factorize(a, nil)
		sinkLU.Solve(x, x)
	}
}

// refactorBench: a Newton iteration's work, same pattern, kept pivots, one solve.
func refactorBench(b *testing.B, a *CSR) { refactorBenchOpts(b, a, nil) }

func refactorBenchOpts(b *testing.B, a *CSR, opts *Options) {
	f, err := Factorize(a, opts)
	if err != nil {
		b.Fatal(err)
	}
	x := make([]float64, a.Rows)
	b.ReportAllocs()
	for b.Loop() {
		sinkErr = f.Refactor(a)
		f.Solve(x, x)
	}
}

// denseBench: gonum's dense LU and one solve, the reference.
func denseBench(b *testing.B, a *CSR) {
	d := toDense(a)
	n := a.Rows
	x := mat.NewVecDense(n, nil)
	var lu mat.LU
	b.ReportAllocs()
	for b.Loop() {
		lu.Factorize(d)
		sinkErr = lu.SolveVecTo(x, false, x)
	}
}

// BenchmarkSolveTridiag41: one solve with a kept factorisation.
func BenchmarkSolveTridiag41(b *testing.B) {
	f, _, x, y, w := tridiag41(b, nil)
	for b.Loop() {
		f.SolveWith(w, y, x)
	}
}

// BenchmarkRefactorValuesTridiag41: a refactorisation by values alone.
func BenchmarkRefactorValuesTridiag41(b *testing.B) {
	f, a, _, _, _ := tridiag41(b, nil)
	for b.Loop() {
		sinkErr = f.RefactorValues(a.Val)
	}
}

// BenchmarkStepTridiag41: a Newton step's linear algebra as the sweep does
// it, RefactorValues then SolveWith; in sparse mode for comparison.
func BenchmarkStepTridiag41(b *testing.B)       { stepBench(b, nil) }
func BenchmarkStepSparseTridiag41(b *testing.B) { stepBench(b, &Options{sparseOnly: true}) }

func stepBench(b *testing.B, opts *Options) {
	f, a, x, y, w := tridiag41(b, opts)
	for b.Loop() {
		sinkErr = f.RefactorValues(a.Val)
		f.SolveWith(w, y, x)
	}
}

// tridiag41 factors the 41x41 tridiagonal test matrix a and gives a
// right-hand side of ones x, a solution y and work space w; allocations are
// reported from here on.
func tridiag41(b *testing.B, opts *Options) (f *LU, a *CSR, x, y, w []float64) {
	a = fromDense(tridiag(41), nil)
	f, err := Factorize(a, opts)
	if err != nil {
		b.Fatal(err)
	}
	x, y, w = make([]float64, a.Rows), make([]float64, a.Rows), make([]float64, a.Rows)
	for i := range x {
		x[i] = 1
	}
	b.ReportAllocs()
	return f, a, x, y, w
}

// BenchmarkStep2: RefactorValues then SolveWith of a full 2x2 matrix, the
// Newton step of a two-unknown model (the syrup blender's sweep).
func BenchmarkStep2(b *testing.B) {
	a := fromDense([][]float64{{3, 1}, {-2, 5}}, nil)
	f, err := Factorize(a, nil)
	if err != nil {
		b.Fatal(err)
	}
	x, y, w := []float64{1, 2}, make([]float64, 2), make([]float64, 2)
	b.ReportAllocs()
	for b.Loop() {
		sinkErr = f.RefactorValues(a.Val)
		f.SolveWith(w, y, x)
	}
}
