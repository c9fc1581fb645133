package sparse

import (
	"math"
	"math/rand/v2"
	"testing"
)

// sameBitsF reports whether a and b hold the same float64 values to the bit.
func sameBitsF(a, b []float64) bool {
	if len(a) != len(b) {
		return false
	}
	for i := range a {
		if math.Float64bits(a[i]) != math.Float64bits(b[i]) {
			return false
		}
	}
	return true
}

// TestSmallPathsMatchGeneral checks the order-2 paths (refactor2, solve2)
// against the general code (refactor, solveN) on every pattern of a 2×2
// matrix that has a transversal, with values that include zeros of both
// signs, infinities, NaN and values that make the kept pivots fail: the
// factors, the error and the solutions must be the same to the bit.
func TestSmallPathsMatchGeneral(t *testing.T) {
	rnd := rand.New(rand.NewPCG(7, 11))
	special := []float64{0, math.Copysign(0, -1), 1, -1, 1e-300, -3e300, math.Inf(1), math.Inf(-1), math.NaN(), 2.5, -0.125}
	value := func() float64 {
		if rnd.IntN(4) == 0 {
			return special[rnd.IntN(len(special))]
		}
		return rnd.NormFloat64() * math.Pow(10, float64(rnd.IntN(7)-3))
	}
	checked, solved, failed := 0, 0, 0
	for mask := 1; mask < 16; mask++ {
		in := func(i, j int) bool { return mask&(1<<(2*i+j)) != 0 }
		if !(in(0, 0) && in(1, 1) || in(0, 1) && in(1, 0)) {
			continue // structurally singular
		}
		for trial := 0; trial < 400; trial++ {
			d := [][]float64{{0, 0}, {0, 0}}
			for i := range 2 {
				for j := range 2 {
					if in(i, j) {
						d[i][j] = 1 + rnd.Float64()
					}
				}
			}
			a := fromDense(d, in)
			base, err := Factorize(a, &Options{Tau: []float64{0.1, 0.5, 1}[trial%3]})
			if err != nil {
				continue
			}
			for k := range a.Val {
				a.Val[k] = value()
			}
			gen, small := new(LU), new(LU)
			gen.CopyFrom(base)
			small.CopyFrom(base)
			gen.work = make([]float64, 2)
			if !small.two.ok {
				t.Fatalf("pattern %04b: no order-2 plan after Factorize and CopyFrom", mask)
			}
			errG := gen.refactor(a.Val)
			errS := small.refactor2(a.Val)
			checked++
			// The public entry points (RefactorValues, SolveWith), which
			// take the order-2 paths directly, against refactorValues
			// and solveN without the plan (the general code), fresh
			// factorisation after a failed kept pivot included.
			pub, ref := new(LU), new(LU)
			pub.CopyFrom(base)
			ref.CopyFrom(base)
			ref.two.ok = false
			ref.work = make([]float64, 2)
			errP, errR := pub.RefactorValues(a.Val), ref.refactorValues(a.Val)
			if (errP == nil) != (errR == nil) {
				t.Fatalf("pattern %04b values %v: RefactorValues error %v, general %v", mask, a.Val, errP, errR)
			}
			if errP == nil {
				b := []float64{value(), value()}
				x1, x2 := make([]float64, 2), make([]float64, 2)
				ref.solveN(x1, b, make([]float64, 2))
				pub.SolveWith(make([]float64, 2), x2, b)
				if !sameBitsF(x1, x2) {
					t.Fatalf("pattern %04b values %v b %v: SolveWith %v, general %v", mask, a.Val, b, x2, x1)
				}
			}
			if (errG == nil) != (errS == nil) {
				t.Fatalf("pattern %04b values %v: general error %v, order-2 path %v", mask, a.Val, errG, errS)
			}
			if errG != nil {
				failed++
				continue
			}
			if !sameBitsF(gen.udiag, small.udiag) || !sameBitsF(gen.lx, small.lx) || !sameBitsF(gen.ux, small.ux) ||
				math.Float64bits(gen.anorm) != math.Float64bits(small.anorm) {
				t.Fatalf("pattern %04b values %v: factors differ: udiag %v/%v lx %v/%v ux %v/%v anorm %v/%v",
					mask, a.Val, gen.udiag, small.udiag, gen.lx, small.lx, gen.ux, small.ux, gen.anorm, small.anorm)
			}
			for range 4 {
				b := []float64{value(), value()}
				x1, x2 := make([]float64, 2), make([]float64, 2)
				gen.solveN(x1, b, make([]float64, 2))
				small.solve2(x2, b)
				if !sameBitsF(x1, x2) {
					t.Fatalf("pattern %04b values %v b %v: general %v, order-2 path %v", mask, a.Val, b, x1, x2)
				}
				solved++
			}
		}
	}
	if failed == 0 || checked-failed < 1000 {
		t.Errorf("%d refactorisations, %d failed the kept pivots: the cases do not cover both outcomes", checked, failed)
	}
	t.Logf("%d refactorisations (%d failed the kept pivots), %d solves", checked, failed, solved)
}
