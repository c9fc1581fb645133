package interact

import (
	"math"
	"math/rand/v2"
	"testing"

	"gonum.org/v1/gonum/mat"
)

func TestSVDPublished(t *testing.T) {
	for _, tc := range []struct {
		name   string
		k      *mat.Dense
		sigma  []float64
		cond   float64
		tol    float64
		source string
	}{
		{"Wood-Berry", woodBerry, []float64{30.4048, 4.0645}, 7.4806, 2e-5, "checkvalues §1 singular values, condition number [R]"},
		{"column A LV", colaLV, []float64{197.2087, 1.39142}, 141.7320, 2e-6, "checkvalues §2c [R]; SP Ex. 3.5 (3.46) [V] 197.2, 1.391, 141.7"},
		{"column A LV unscaled", colaLVUnscaled, []float64{1.972087, 0.0139142}, 141.7320, 2e-6, "checkvalues §2c last row [R]"},
		{"G1", g1, []float64{7.34342, 0.27235}, 26.963, 2e-5, "checkvalues §4 SVD example, SP (3.44) [V] 7.343, 0.272, 27.0; [R]"},
	} {
		r, err := SVD(tc.k)
		if err != nil {
			t.Fatal(err)
		}
		for i, w := range tc.sigma {
			if !near(r.Values[i], w, tc.tol) {
				t.Errorf("%s (%s): σ%d = %.6f, want %.6f", tc.name, tc.source, i+1, r.Values[i], w)
			}
		}
		if !near(r.Cond, tc.cond, tc.tol) {
			t.Errorf("%s (%s): γ = %.5f, want %.5f", tc.name, tc.source, r.Cond, tc.cond)
		}
	}
	// checkvalues §2c SVD directions, SP (3.46) [V]: compare each (u_i, v_i)
	// pair up to a common sign.
	r, _ := SVD(colaLV)
	u := [][]float64{{0.625, 0.781}, {-0.781, 0.625}}
	v := [][]float64{{0.707, -0.708}, {-0.708, -0.707}}
	for i := 0; i < 2; i++ {
		s := math.Copysign(1, r.U.At(0, i)*u[i][0])
		for j := 0; j < 2; j++ {
			if math.Abs(s*r.U.At(j, i)-u[i][j]) > 1e-3 || math.Abs(s*r.V.At(j, i)-v[i][j]) > 1e-3 {
				t.Errorf("direction %d: u=%v v=%v, want ±%v, ±%v (SP 3.46)", i+1, mat.Col(nil, i, r.U), mat.Col(nil, i, r.V), u[i], v[i])
			}
		}
	}
}

func TestMinConditionNumberPublished(t *testing.T) {
	for _, tc := range []struct {
		name string
		k    *mat.Dense
		want float64
		src  string
	}{
		{"Wood-Berry", woodBerry, 5.8671, "checkvalues §1 minimized condition number [R]"},
		{"column A LV", colaLV, 138.26799, "checkvalues §2c [R]; SP Ex. 3.11 [V] 138.268"},
		{"column A LV unscaled", colaLVUnscaled, 138.26799, "checkvalues §2c last row: γ* scale-invariant [R]"},
	} {
		g, dl, dr, err := MinConditionNumber(tc.k)
		if err != nil {
			t.Fatal(err)
		}
		if !near(g, tc.want, 2e-5) {
			t.Errorf("%s (%s): γ* = %.6f, want %.6f", tc.name, tc.src, g, tc.want)
		}
		// The returned scalings attain it.
		var m mat.Dense
		m.Mul(mat.NewDiagDense(2, dl), tc.k)
		m.Mul(&m, mat.NewDiagDense(2, dr))
		if s, _ := SVD(&m); !near(s.Cond, g, 1e-9) {
			t.Errorf("%s: γ(Dl K Dr) = %g, γ* = %g", tc.name, s.Cond, g)
		}
	}
}

// gmh is the closed form for 2x2 of Grosdidier, Morari & Holt (1985):
// γ* = ||Λ||_i1 + sqrt(||Λ||_i1² - 1) (checkvalues §4, SP A.70 [V]).
func gmh(k mat.Matrix) float64 {
	var l mat.Dense
	if err := RGA(&l, k); err != nil {
		panic(err)
	}
	n := math.Max(math.Abs(l.At(0, 0))+math.Abs(l.At(1, 0)), math.Abs(l.At(0, 1))+math.Abs(l.At(1, 1)))
	return n + math.Sqrt(math.Max(0, n*n-1))
}

func TestMinConditionNumberMatchesGMH(t *testing.T) {
	// checkvalues §4 "min. condition number, 2x2", SP (A.70) [V].
	rnd := rand.New(rand.NewPCG(4, 4))
	for trial := 0; trial < 200; trial++ {
		k := randMatrix(rnd, 2, 2)
		want := gmh(k)
		got, _, _, err := MinConditionNumber(k)
		if err != nil {
			t.Fatal(err)
		}
		if !near(got, want, 1e-6) {
			t.Errorf("K=%v: γ* = %.9g, GMH formula %.9g", k.RawMatrix().Data, got, want)
		}
		// The closed-form scalings against the numerical minimisation.
		num, _, _, err := minCondNumeric(k, &minWork{})
		if err != nil {
			t.Fatal(err)
		}
		if !near(num, want, 1e-6) {
			t.Errorf("K=%v: numerical γ* = %.9g, GMH formula %.9g", k.RawMatrix().Data, num, want)
		}
	}
}

func TestMinConditionNumberBounds(t *testing.T) {
	// checkvalues §4 "bounds", SP (A.78)-(A.79) [V]: ||Λ||_m - 1/γ* <= γ* <=
	// ||Λ||_sum + k(n), k(3) = 1 and k(4) = 2 conjectured; γ* <= γ always.
	rnd := rand.New(rand.NewPCG(5, 5))
	for trial := 0; trial < 30; trial++ {
		n := 3 + trial%2
		k := randMatrix(rnd, n, n)
		var l mat.Dense
		if err := RGA(&l, k); err != nil {
			t.Fatal(err)
		}
		sum, mx := 0.0, 0.0
		for _, v := range l.RawMatrix().Data {
			sum += math.Abs(v)
			mx = math.Max(mx, math.Abs(v))
		}
		lm := 2 * math.Max(mx, mx) // ||Λ||_m = 2 max|λ_ij| (SP A.78 norm)
		g, _, _, err := MinConditionNumber(k)
		if err != nil {
			t.Fatal(err)
		}
		s, _ := SVD(k)
		if g > s.Cond*(1+1e-9) {
			t.Errorf("n=%d: γ* = %g > γ = %g", n, g, s.Cond)
		}
		if g > sum+float64(n-2)+1e-6 {
			t.Errorf("n=%d: γ* = %g > ||Λ||sum + k(n) = %g", n, g, sum+float64(n-2))
		}
		if lm-1/g > g+1e-6 {
			t.Errorf("n=%d: lower bound ||Λ||m - 1/γ* = %g exceeds γ* = %g", n, lm-1/g, g)
		}
	}
}

func TestMinConditionNumberSingular(t *testing.T) {
	_, _, _, err := MinConditionNumber(mat.NewDense(2, 2, []float64{1, 2, 2, 4}))
	if _, ok := err.(*SingularError); !ok {
		t.Errorf("singular K: err = %v, want *SingularError", err)
	}
}
