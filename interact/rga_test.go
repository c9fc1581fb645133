package interact

import (
	"math"
	"math/rand/v2"
	"testing"

	"gonum.org/v1/gonum/floats/scalar"
	"gonum.org/v1/gonum/mat"
)

// Gain matrices used as oracles; every use cites the row of
// /work/shared/checkvalues.md it checks against.
var (
	// checkvalues §1, Wood & Berry (1973) G(0) [C].
	woodBerry = mat.NewDense(2, 2, []float64{12.8, -18.9, 6.6, -19.4})
	// checkvalues §2b, idealised LV model of column A, SP eq. (3.45) [V].
	colaLV = mat.NewDense(2, 2, []float64{87.8, -86.4, 108.2, -109.6})
	// checkvalues §2b, unscaled column-A LV gains, SP eq. (12.18) [V].
	colaLVUnscaled = mat.NewDense(2, 2, []float64{0.878, -0.864, 1.082, -1.096})
	// checkvalues §4 "2x2 example": A1, SP p. 522 [V].
	a1 = mat.NewDense(2, 2, []float64{1, -2, 3, 4})
	// checkvalues §4 "SVD example": G1, SP eq. (3.44) [V].
	g1 = mat.NewDense(2, 2, []float64{5, 4, 3, 2})
)

func near(got, want, rel float64) bool { return scalar.EqualWithinAbsOrRel(got, want, rel, rel) }

func fillNaN(m *mat.Dense) {
	r, c := m.Dims()
	for i := 0; i < r; i++ {
		for j := 0; j < c; j++ {
			m.Set(i, j, math.NaN())
		}
	}
}

func TestRGAPublished(t *testing.T) {
	for _, tc := range []struct {
		name string
		k    *mat.Dense
		want []float64 // row-major Λ
		tol  float64
		src  string
	}{
		{"Wood-Berry", woodBerry, []float64{2.0094, -1.0094, -1.0094, 2.0094}, 5e-5, "checkvalues §1 RGA [R] (Wood & Berry 1973)"},
		{"column A LV", colaLV, []float64{35.0688, -34.0688, -34.0688, 35.0688}, 5e-6, "checkvalues §2c lambda11 35.0688 [R]; SP Ex. 3.11 (3.73) [V] 35.1"},
		{"column A LV unscaled", colaLVUnscaled, []float64{35.0688, -34.0688, -34.0688, 35.0688}, 5e-6, "checkvalues §2c last row: RGA scale-invariant [R]"},
		{"A1", a1, []float64{0.4, 0.6, 0.6, 0.4}, 1e-12, "checkvalues §4 2x2 example, SP p. 522 [V]"},
		{"G1", g1, []float64{-5, 6, 6, -5}, 1e-12, "checkvalues §4 SVD example RGA [R]"},
		// checkvalues §3, BEQ Ex. 13.1 whiskey blending [V]: gain matrix
		// [0.025 -0.075; 1 1] [R], rows z, F; columns F1, F2.
		{"BEQ blending", mat.NewDense(2, 2, []float64{0.025, -0.075, 1, 1}), []float64{0.25, 0.75, 0.75, 0.25}, 1e-12, "checkvalues §3 BEQ Sec. 13.6 [V]"},
		// checkvalues §3, SP Ex. 3.9 sugar/water [C]+[R].
		{"SP blending", mat.NewDense(2, 2, []float64{1, 1, 0.4, -0.1}), []float64{0.2, 0.8, 0.8, 0.2}, 1e-12, "checkvalues §3 SP Ex. 3.9 [C]"},
	} {
		var got mat.Dense
		if err := RGA(&got, tc.k); err != nil {
			t.Fatalf("%s: %v", tc.name, err)
		}
		for i, w := range tc.want {
			if g := got.RawMatrix().Data[i]; !near(g, w, tc.tol) {
				t.Errorf("%s (%s): λ[%d] = %.6f, want %.6f", tc.name, tc.src, i, g, w)
			}
		}
	}
}

// Blending: λ(F paired with the solute stream) = solute fraction s, derived
// in checkvalues §3 [R] for any s.
func TestRGABlendingIsFlowFraction(t *testing.T) {
	for _, s := range []float64{0.05, 0.3, 0.5, 0.9} {
		F := 2.0
		// y1 = F = f1 + f2, y2 = s = f1/F (pure solute f1): ds/df1 = (1-s)/F, ds/df2 = -s/F.
		k := mat.NewDense(2, 2, []float64{1, 1, (1 - s) / F, -s / F})
		var l mat.Dense
		if err := RGA(&l, k); err != nil {
			t.Fatal(err)
		}
		if !near(l.At(0, 0), s, 1e-12) || !near(l.At(1, 0), 1-s, 1e-12) {
			t.Errorf("s=%g: λ(F,f1)=%g λ(s,f1)=%g, want %g and %g (checkvalues §3 [R])", s, l.At(0, 0), l.At(1, 0), s, 1-s)
		}
	}
}

func TestRGAProperties(t *testing.T) {
	// checkvalues §4 "RGA properties", SP A.4.1 [V].
	rnd := rand.New(rand.NewPCG(1, 1))
	for trial := 0; trial < 20; trial++ {
		n := 2 + trial%5
		k := randMatrix(rnd, n, n)
		var l mat.Dense
		fillNaN(&l)
		l.Reset()
		if err := RGA(&l, k); err != nil {
			t.Fatal(err)
		}
		for i := 0; i < n; i++ {
			if r := mat.Sum(l.RowView(i)); !near(r, 1, 1e-9) {
				t.Errorf("n=%d row %d sums to %g", n, i, r)
			}
			if c := mat.Sum(l.ColView(i)); !near(c, 1, 1e-9) {
				t.Errorf("n=%d col %d sums to %g", n, i, c)
			}
		}
		// Scaling invariance: Λ(D1 K D2) = Λ(K).
		d1, d2 := mat.NewDiagDense(n, nil), mat.NewDiagDense(n, nil)
		for i := 0; i < n; i++ {
			d1.SetDiag(i, math.Exp(rnd.NormFloat64()))
			d2.SetDiag(i, -math.Exp(rnd.NormFloat64()))
		}
		var ks, ls mat.Dense
		ks.Mul(d1, k)
		ks.Mul(&ks, d2)
		if err := RGA(&ls, &ks); err != nil {
			t.Fatal(err)
		}
		if !mat.EqualApprox(&l, &ls, 1e-9) {
			t.Errorf("n=%d: RGA not scaling invariant", n)
		}
		// Permutation equivariance: Λ(P1 K P2) = P1 Λ(K) P2.
		p1, p2 := permMatrix(rnd.Perm(n)), permMatrix(rnd.Perm(n))
		var kp, lp, want mat.Dense
		kp.Mul(p1, k)
		kp.Mul(&kp, p2)
		if err := RGA(&lp, &kp); err != nil {
			t.Fatal(err)
		}
		want.Mul(p1, &l)
		want.Mul(&want, p2)
		if !mat.EqualApprox(&lp, &want, 1e-9) {
			t.Errorf("n=%d: RGA not permutation equivariant", n)
		}
		// Λ(K⁻¹) = Λ(Kᵀ) = Λ(K)ᵀ.
		var inv, li, lt mat.Dense
		if err := inv.Inverse(k); err != nil {
			t.Fatal(err)
		}
		if err := RGA(&li, &inv); err != nil {
			t.Fatal(err)
		}
		if err := RGA(&lt, k.T()); err != nil {
			t.Fatal(err)
		}
		if !mat.EqualApprox(&li, l.T(), 1e-9) || !mat.EqualApprox(&lt, l.T(), 1e-9) {
			t.Errorf("n=%d: Λ(K⁻¹), Λ(Kᵀ) and Λ(K)ᵀ differ", n)
		}
	}
	// Λ = I for a triangular K.
	tri := mat.NewDense(3, 3, []float64{2, 0, 0, 1, 3, 0, -4, 5, 1})
	var l mat.Dense
	if err := RGA(&l, tri); err != nil {
		t.Fatal(err)
	}
	if !mat.EqualApprox(&l, eye(3), 1e-12) {
		t.Errorf("triangular K: Λ = %v, want I (SP A.4.1)", mat.Formatted(&l))
	}
}

func TestRGASingular(t *testing.T) {
	var l mat.Dense
	err := RGA(&l, mat.NewDense(2, 2, []float64{1, 2, 2, 4}))
	if _, ok := err.(mat.Condition); !ok {
		t.Fatalf("singular K: err = %v, want mat.Condition", err)
	}
	err = RGA(&l, mat.NewDense(2, 2, []float64{1, 2, 1, 2 + 1e-14}))
	if _, ok := err.(mat.Condition); !ok {
		t.Fatalf("near-singular K: err = %v, want mat.Condition", err)
	}
}

func TestRGANotSquarePanics(t *testing.T) {
	defer func() {
		if recover() == nil {
			t.Error("RGA of a 2x3 matrix did not panic")
		}
	}()
	var l mat.Dense
	_ = RGA(&l, mat.NewDense(2, 3, nil))
}

func TestRGAPinv(t *testing.T) {
	// checkvalues §4 "non-square example 1", SP Ex. 10.2 (p. 419) [V].
	g := mat.NewDense(6, 2, []float64{10, 10, 10, 9, 2, 1, 2, -1, 2, 2, 0, 2})
	want := []float64{-0.1050, 0.6303, 0.5742, -0.1008, 0.1317, -0.0616, 0.4034, 0.2101, -0.0042, 0.0252, 0, 0.2969}
	wantRows := []float64{0.5252, 0.4734, 0.0700, 0.6134, 0.0210, 0.2969}
	var l mat.Dense
	if err := RGAPinv(&l, g); err != nil {
		t.Fatal(err)
	}
	for i, w := range want {
		if got := l.RawMatrix().Data[i]; math.Abs(got-w) > 6e-5 {
			t.Errorf("Λ[%d,%d] = %.4f, want %.4f (SP Ex. 10.2)", i/2, i%2, got, w)
		}
	}
	for i, w := range wantRows {
		if got := mat.Sum(l.RowView(i)); math.Abs(got-w) > 1e-4 {
			t.Errorf("row %d sums to %.4f, want %.4f (SP Ex. 10.2)", i, got, w)
		}
	}
	for j := 0; j < 2; j++ {
		if got := mat.Sum(l.ColView(j)); !near(got, 1, 1e-12) {
			t.Errorf("column %d sums to %g, want 1 (SP A.83-A.86)", j, got)
		}
	}
	// Square and non-singular: RGAPinv equals RGA.
	var lp, lr mat.Dense
	if err := RGAPinv(&lp, woodBerry); err != nil {
		t.Fatal(err)
	}
	_ = RGA(&lr, woodBerry)
	if !mat.EqualApprox(&lp, &lr, 1e-12) {
		t.Error("RGAPinv differs from RGA on a square matrix")
	}
	var lz mat.Dense
	if err := RGAPinv(&lz, mat.NewDense(3, 2, nil)); err == nil {
		t.Error("RGAPinv of a zero matrix: no error")
	}
}

func TestNiederlinski(t *testing.T) {
	// checkvalues §1: NI = 0.49766 = 1/λ11 [R].
	if got := Niederlinski(woodBerry, Pairing{0, 1}); !near(got, 0.49766, 1e-5) {
		t.Errorf("Wood-Berry NI = %.6f, want 0.49766 (checkvalues §1)", got)
	}
	// checkvalues §2c: NI = 0.028515 [R].
	if got := Niederlinski(colaLV, Pairing{0, 1}); !near(got, 0.028515, 1e-4) {
		t.Errorf("column A NI = %.6f, want 0.028515 (checkvalues §2c)", got)
	}
	// 2x2: NI = 1/λ11 for either pairing (checkvalues §4 "2x2 relation" [R]).
	var l mat.Dense
	_ = RGA(&l, woodBerry)
	if got := Niederlinski(woodBerry, Pairing{1, 0}); !near(got, 1/l.At(0, 1), 1e-12) {
		t.Errorf("off-diagonal NI = %g, want 1/λ12 = %g", got, 1/l.At(0, 1))
	}
	// Against the definition det(K_p)/∏ k_ii on random 4x4 for every pairing.
	rnd := rand.New(rand.NewPCG(2, 2))
	k := randMatrix(rnd, 4, 4)
	for p := range Pairings(4) {
		kp := mat.NewDense(4, 4, nil)
		prod := 1.0
		for i := 0; i < 4; i++ {
			for c := 0; c < 4; c++ {
				kp.Set(c, i, k.At(c, p[i]))
			}
			prod *= k.At(i, p[i])
		}
		if got, want := Niederlinski(k, p), mat.Det(kp)/prod; !near(got, want, 1e-9) {
			t.Errorf("pairing %v: NI = %g, want %g", p, got, want)
		}
	}
}

func TestRGANumberAndSensitivity(t *testing.T) {
	var l mat.Dense
	_ = RGA(&l, colaLV)
	// checkvalues §2c: ||Λ||_sum = 138.27522 [R]; with P = 0 it is the sum norm.
	sum := 0.0
	for _, v := range l.RawMatrix().Data {
		sum += math.Abs(v)
	}
	if !near(sum, 138.27522, 1e-6) {
		t.Errorf("||Λ||sum = %.5f, want 138.27522 (checkvalues §2c)", sum)
	}
	if got, want := RGANumber(&l, Pairing{0, 1}), sum-2; !near(got, want, 1e-12) {
		t.Errorf("RGA number diag = %g, want %g", got, want)
	}
	if got, want := RGANumber(&l, Pairing{1, 0}), sum+2; !near(got, want, 1e-12) {
		t.Errorf("RGA number off-diag = %g, want %g", got, want)
	}
	// checkvalues §4 "element uncertainty", SP property 6 p. 523 [V]:
	// a_ij → a_ij(1 - 1/λ_ij) makes det = 0.
	rnd := rand.New(rand.NewPCG(3, 3))
	for _, k := range []*mat.Dense{woodBerry, colaLV, a1, randMatrix(rnd, 3, 3), randMatrix(rnd, 5, 5)} {
		var lk mat.Dense
		if err := RGA(&lk, k); err != nil {
			t.Fatal(err)
		}
		es := ElementSensitivity(&lk)
		n, _ := k.Dims()
		for i := 0; i < n; i++ {
			for j := 0; j < n; j++ {
				var kp mat.Dense
				kp.CloneFrom(k)
				kp.Set(i, j, k.At(i, j)*(1-es.At(i, j)))
				var svd mat.SVD
				svd.Factorize(&kp, mat.SVDNone)
				s := svd.Values(nil)
				if s[n-1]/s[0] > 1e-10 {
					t.Errorf("perturbing k[%d,%d] by 1-1/λ leaves σmin/σmax = %g, want 0 (SP property 6)", i, j, s[n-1]/s[0])
				}
			}
		}
	}
}

func randMatrix(rnd *rand.Rand, r, c int) *mat.Dense {
	m := mat.NewDense(r, c, nil)
	for i := 0; i < r; i++ {
		for j := 0; j < c; j++ {
			m.Set(i, j, rnd.NormFloat64())
		}
	}
	return m
}

func permMatrix(p []int) *mat.Dense {
	m := mat.NewDense(len(p), len(p), nil)
	for i, j := range p {
		m.Set(i, j, 1)
	}
	return m
}

func eye(n int) *mat.Dense {
	m := mat.NewDense(n, n, nil)
	for i := 0; i < n; i++ {
		m.Set(i, i, 1)
	}
	return m
}
