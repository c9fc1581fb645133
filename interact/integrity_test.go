package interact

import (
	"math"
	"math/rand/v2"
	"slices"
	"testing"

	"gonum.org/v1/gonum/mat"
)

func TestIntegrityOneSubsystemFails(t *testing.T) {
	// Derived by hand (no published source): K = [1 2 1; 1 1 -1; 0 2 1],
	// det K = 3, NI = 3. Sub-systems of the diagonal pairing:
	//   {y1,y2}: [1 2; 1 1], det -1, NI = -1        -> fails
	//   {y1,y3}: [1 1; 0 1], det 1,  NI = 1, λ = 1,1 -> holds
	//   {y2,y3}: [1 -1; 2 1], det 3, NI = 3, λ = 1/3, 1/3 -> holds
	k := mat.NewDense(3, 3, []float64{1, 2, 1, 1, 1, -1, 0, 2, 1})
	got := Integrity(k, Pairing{0, 1, 2})
	want := []SubsystemCheck{
		{Auto: []int{0, 1}, NI: -1, Lambdas: []float64{-1, -1}, Fails: true},
		{Auto: []int{0, 2}, NI: 1, Lambdas: []float64{1, 1}},
		{Auto: []int{1, 2}, NI: 3, Lambdas: []float64{1.0 / 3, 1.0 / 3}},
	}
	if len(got) != len(want) {
		t.Fatalf("got %d subsystems, want %d", len(got), len(want))
	}
	for i, w := range want {
		g := got[i]
		if !slices.Equal(g.Auto, w.Auto) || !near(g.NI, w.NI, 1e-12) || g.Fails != w.Fails {
			t.Errorf("subsystem %d: got %+v, want %+v", i, g, w)
		}
		for a := range w.Lambdas {
			if !near(g.Lambdas[a], w.Lambdas[a], 1e-12) {
				t.Errorf("subsystem %v: λ = %v, want %v", w.Auto, g.Lambdas, w.Lambdas)
			}
		}
	}
	if m := got[0].Manual(3); !slices.Equal(m, []int{2}) {
		t.Errorf("Manual = %v, want [2]", m)
	}
	// With n-1 loops left, λ of the loop in manual = NI(rest)/NI(all):
	// λ33 = -1/3 (derived: λ_kk = k_kk det(K_rest)/det K).
	var l mat.Dense
	_ = RGA(&l, k)
	if !near(l.At(2, 2), -1.0/3, 1e-12) {
		t.Errorf("λ33 = %g, want -1/3", l.At(2, 2))
	}
}

func TestIntegrityCount(t *testing.T) {
	rnd := rand.New(rand.NewPCG(6, 6))
	for n := 2; n <= 6; n++ {
		k := randMatrix(rnd, n, n)
		p := Pairing(rnd.Perm(n))
		got := Integrity(k, p)
		if want := (1 << n) - n - 2; len(got) != want {
			t.Errorf("n=%d: %d subsystems, want 2^n-n-2 = %d", n, len(got), want)
		}
		for _, c := range got {
			sub := mat.NewDense(len(c.Auto), len(c.Auto), nil)
			prod := 1.0
			for a, i := range c.Auto {
				for b, j := range c.Auto {
					sub.Set(a, b, k.At(i, p[j]))
				}
				prod *= k.At(i, p[i])
			}
			if want := mat.Det(sub) / prod; !near(c.NI, want, 1e-9) {
				t.Errorf("n=%d %v: NI = %g, want %g", n, c.Auto, c.NI, want)
			}
		}
	}
}

func TestRDGByHand(t *testing.T) {
	// Derived by hand: K = [2 1; 1 1], K⁻¹ = [1 -1; -1 2], kd = [3; 1],
	// K⁻¹kd = [2; -1]. Diagonal pairing: β1 = 2·2/3 = 4/3, β2 = 1·(-1)/1 = -1.
	// Off-diagonal: β1 = k12·[K⁻¹kd]_2/kd1 = -1/3, β2 = k21·[K⁻¹kd]_1/kd2 = 2.
	k := mat.NewDense(2, 2, []float64{2, 1, 1, 1})
	kd := mat.NewDense(2, 1, []float64{3, 1})
	for _, tc := range []struct {
		p    Pairing
		want []float64
	}{
		{Pairing{0, 1}, []float64{4.0 / 3, -1}},
		{Pairing{1, 0}, []float64{-1.0 / 3, 2}},
	} {
		b, err := RDG(k, kd, tc.p)
		if err != nil {
			t.Fatal(err)
		}
		for i, w := range tc.want {
			if !near(b.At(i, 0), w, 1e-12) {
				t.Errorf("pairing %v: β%d = %g, want %g", tc.p, i+1, b.At(i, 0), w)
			}
		}
	}
	// Scaling independence (SP eq. 10.71 remark, checkvalues §4 RDG row [V]).
	ks := mat.NewDense(2, 2, []float64{2 * 10, 1 * 0.5, 1 * 10 * 3, 1 * 0.5 * 3})
	kds := mat.NewDense(2, 1, []float64{3 * 7, 1 * 3 * 7})
	b1, _ := RDG(k, kd, Pairing{0, 1})
	b2, _ := RDG(ks, kds, Pairing{0, 1})
	if !mat.EqualApprox(b1, b2, 1e-12) {
		t.Errorf("RDG depends on scaling: %v vs %v", b1.RawMatrix().Data, b2.RawMatrix().Data)
	}
	// A disturbance that does not move an output open loop gives NaN.
	b, _ := RDG(k, mat.NewDense(2, 1, []float64{1, 0}), Pairing{0, 1})
	if !math.IsNaN(b.At(1, 0)) {
		t.Errorf("β for kd = 0: %g, want NaN", b.At(1, 0))
	}
	if _, err := RDG(mat.NewDense(2, 2, []float64{1, 1, 1, 1}), kd, Pairing{0, 1}); err == nil {
		t.Error("RDG of singular K: no error")
	}
}

func TestDecoupler(t *testing.T) {
	rnd := rand.New(rand.NewPCG(7, 7))
	for n := 2; n <= 6; n++ {
		k := randMatrix(rnd, n, n)
		p := Pairing(rnd.Perm(n))
		d, err := Decoupler(k, p)
		if err != nil {
			t.Fatal(err)
		}
		var kd mat.Dense
		kd.Mul(k, d)
		var l mat.Dense
		_ = RGA(&l, k)
		for i := 0; i < n; i++ {
			for j := 0; j < n; j++ {
				want := 0.0
				if i == j {
					want = k.At(i, p[i])
				}
				if math.Abs(kd.At(i, j)-want) > 1e-9 {
					t.Errorf("n=%d: (K D)[%d,%d] = %g, want %g", n, i, j, kd.At(i, j), want)
				}
			}
			if !near(d.At(p[i], i), l.At(i, p[i]), 1e-9) {
				t.Errorf("n=%d: D[p(%d),%d] = %g, want λ = %g", n, i, i, d.At(p[i], i), l.At(i, p[i]))
			}
		}
	}
	if _, err := Decoupler(mat.NewDense(2, 2, []float64{1, 2, 2, 4}), Pairing{0, 1}); err == nil {
		t.Error("Decoupler of singular K: no error")
	}
}
