package interact

import (
	"fmt"
	"math"
	"math/rand/v2"
	"testing"

	"gonum.org/v1/gonum/mat"
)

// hardMatrix returns a seeded random r×c matrix of one of several kinds
// chosen by trial: plain normal, rows and columns scaled over 16 decades,
// built from random orthogonal factors with a condition number up to 1e12,
// small integers (ties between pivots, exact zeros, singular ones), and
// single zero gains.
func hardMatrix(rnd *rand.Rand, r, c, trial int) *mat.Dense {
	k := randMatrix(rnd, r, c)
	switch trial % 6 {
	case 1: // badly scaled
		for i := 0; i < r; i++ {
			for j := 0; j < c; j++ {
				k.Set(i, j, k.At(i, j)*math.Pow(10, 8*(2*rnd.Float64()-1)))
			}
		}
	case 2: // ill-conditioned: U diag(σ) Vᵀ with σ from 1 down to 10^-e, e up to 12
		if r == c {
			var qu, qv mat.QR
			qu.Factorize(randMatrix(rnd, r, r))
			qv.Factorize(randMatrix(rnd, r, r))
			var u, v mat.Dense
			qu.QTo(&u)
			qv.QTo(&v)
			e := 12 * rnd.Float64()
			d := mat.NewDiagDense(r, nil)
			for i := 0; i < r; i++ {
				d.SetDiag(i, math.Pow(10, -e*float64(i)/float64(max(1, r-1))))
			}
			k.Mul(&u, d)
			k.Mul(k, v.T())
		}
	case 3: // small integers
		for i := 0; i < r; i++ {
			for j := 0; j < c; j++ {
				k.Set(i, j, float64(rnd.IntN(7)-3))
			}
		}
	case 4: // a zero gain
		k.Set(rnd.IntN(r), rnd.IntN(c), 0)
	case 5: // nearly equal singular values: a scaled rotation, perturbed
		if r == 2 && c == 2 {
			th, s := 2*math.Pi*rnd.Float64(), math.Pow(10, 4*(2*rnd.Float64()-1))
			eps := math.Pow(10, -16*rnd.Float64())
			k = mat.NewDense(2, 2, []float64{s * math.Cos(th), -s * math.Sin(th), s * math.Sin(th), s * (1 + eps) * math.Cos(th)})
		}
	}
	return k
}

// refInverseDet is the allocating inverseDet the Analyzer replaced, kept as
// the reference: gonum's mat.LU.
func refInverseDet(dst *mat.Dense, k mat.Matrix) (cond, det float64) {
	n, _ := k.Dims()
	var lu mat.LU
	lu.Factorize(k)
	logDet, sign := lu.LogDet()
	det = math.Exp(logDet) * sign
	cond = lu.Cond()
	if math.IsInf(cond, 1) || math.IsNaN(cond) {
		return math.Inf(1), det
	}
	dst.Reset()
	_ = lu.SolveTo(dst, false, eye(n))
	return cond, det
}

// The reusable LU gives gonum's inverse and determinant bit for bit, and its
// decisions (singular, above ConditionLimit) are gonum's.
func TestLUWorkSameAsGonum(t *testing.T) {
	rnd := rand.New(rand.NewPCG(31, 7))
	var w luWork
	for trial := 0; trial < 30000; trial++ {
		n := []int{2, 2, 2, 3, 4}[trial%5]
		k := hardMatrix(rnd, n, n, trial/5)
		var want, got mat.Dense
		cw, dw := refInverseDet(&want, k)
		got.ReuseAs(n, n)
		cg, dg := w.inverseDet(&got, k)
		what := fmt.Sprintf("trial %d, K = %v", trial, k.RawMatrix().Data)
		if math.IsInf(cw, 1) != math.IsInf(cg, 1) || (cw > ConditionLimit) != (cg > ConditionLimit) {
			t.Fatalf("%s: condition %g, gonum %g", what, cg, cw)
		}
		if !sameBits(dg, dw) {
			t.Fatalf("%s: det %v, gonum %v", what, dg, dw)
		}
		if !math.IsInf(cw, 1) && !sameDense(&got, &want) {
			t.Fatalf("%s: inverse %v, gonum %v", what, got.RawMatrix().Data, want.RawMatrix().Data)
		}
	}
}

// The reusable SVD (closed form for 2x2) gives gonum's values and directions
// bit for bit, and the 2x2 value-only path gives gonum's condition number.
func TestSVDWorkSameAsGonum(t *testing.T) {
	rnd := rand.New(rand.NewPCG(32, 8))
	var w svdWork
	var r SVDResult
	for trial := 0; trial < 30000; trial++ {
		n := []int{2, 2, 2, 3, 4}[trial%5]
		k := hardMatrix(rnd, n, n, trial/5)
		what := fmt.Sprintf("trial %d, K = %v", trial, k.RawMatrix().Data)
		want, err := SVD(k)
		if err != nil {
			t.Fatal(err)
		}
		if err := w.svdInto(&r, k); err != nil {
			t.Fatal(err)
		}
		if !sameSlice(r.Values, want.Values) || !sameBits(r.Cond, want.Cond) || !sameDense(r.U, want.U) || !sameDense(r.V, want.V) {
			t.Fatalf("%s: σ %v U %v V %v, gonum σ %v U %v V %v", what, r.Values, r.U.RawMatrix().Data, r.V.RawMatrix().Data,
				want.Values, want.U.RawMatrix().Data, want.V.RawMatrix().Data)
		}
		if n == 2 {
			var svd mat.SVD
			if !svd.Factorize(k, mat.SVDNone) {
				t.Fatal("no convergence")
			}
			v := svd.Values(nil)
			raw := k.RawMatrix().Data
			if smin, smax, ok := condNone2(raw[0], raw[1], raw[2], raw[3]); ok && (!sameBits(smax, v[0]) || !sameBits(smin, v[1])) {
				t.Fatalf("%s: σ = %v, %v, gonum %v", what, smax, smin, v)
			}
		}
	}
}

// mulInto is Dense.Mul bit for bit on gain-matrix sizes.
func TestMulIntoSameAsGonum(t *testing.T) {
	rnd := rand.New(rand.NewPCG(33, 9))
	var got mat.Dense
	for trial := 0; trial < 5000; trial++ {
		n, nd := 1+rnd.IntN(8), 1+rnd.IntN(4)
		a, b := hardMatrix(rnd, n, n, trial), hardMatrix(rnd, n, nd, trial/2)
		var want mat.Dense
		want.Mul(a, b)
		mulInto(&got, a, b)
		if !sameDense(&got, &want) {
			t.Fatalf("trial %d: %v·%v = %v, gonum %v", trial, a.RawMatrix().Data, b.RawMatrix().Data, got.RawMatrix().Data, want.RawMatrix().Data)
		}
	}
}
