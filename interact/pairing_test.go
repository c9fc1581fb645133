package interact

import (
	"math"
	"math/rand/v2"
	"slices"
	"sort"
	"testing"

	"gonum.org/v1/gonum/mat"
)

func TestPairingsEnumeration(t *testing.T) {
	for n := 1; n <= 6; n++ {
		var all []Pairing
		for p := range Pairings(n) {
			all = append(all, slices.Clone(p))
		}
		if len(all) != factorial(n) {
			t.Errorf("n=%d: %d pairings, want %d", n, len(all), factorial(n))
		}
		for i := 1; i < len(all); i++ {
			if all[i-1].Compare(all[i]) >= 0 {
				t.Fatalf("n=%d: not strictly lexicographic at %d: %v then %v", n, i, all[i-1], all[i])
			}
		}
	}
	count := 0
	for range Pairings(0) {
		count++
	}
	if count != 0 {
		t.Errorf("Pairings(0) yielded %d", count)
	}
	// Early stop.
	count = 0
	for range Pairings(5) {
		count++
		if count == 3 {
			break
		}
	}
}

func TestPairingSignAndString(t *testing.T) {
	for _, tc := range []struct {
		p    Pairing
		sign int
	}{
		{Pairing{0, 1, 2}, 1}, {Pairing{1, 0, 2}, -1}, {Pairing{1, 2, 0}, 1}, {Pairing{2, 1, 0}, -1}, {Pairing{1, 0, 3, 2}, 1},
	} {
		// Compare with det of the permutation matrix.
		m := mat.NewDense(len(tc.p), len(tc.p), nil)
		for i, j := range tc.p {
			m.Set(i, j, 1)
		}
		if got := tc.p.sign(); got != tc.sign || float64(got) != math.Round(mat.Det(m)) {
			t.Errorf("sign(%v) = %d, want %d", tc.p, got, tc.sign)
		}
	}
	if got := (Pairing{1, 0}).String(); got != "y1-u2 y2-u1" {
		t.Errorf("String = %q", got)
	}
	if got := (Pairing{1, 0}).Label([]string{"xD", "xB"}, []string{"R", "S"}); got != "xD-S, xB-R" {
		t.Errorf("Label = %q", got)
	}
}

func assignmentCost(c *mat.Dense, p Pairing) float64 {
	s := 0.0
	for i, j := range p {
		s += c.At(i, j)
	}
	return s
}

func TestBestPairingsAgreesWithBruteForce(t *testing.T) {
	rnd := rand.New(rand.NewPCG(8, 8))
	for trial := 0; trial < 5; trial++ {
		n := 6
		c := randMatrix(rnd, n, n)
		if trial == 4 { // some forbidden pairs
			for i := 0; i < n; i++ {
				c.Set(i, (i+1)%n, math.Inf(1))
			}
		}
		var brute []float64
		for p := range Pairings(n) {
			if v := assignmentCost(c, p); !math.IsInf(v, 1) {
				brute = append(brute, v)
			}
		}
		sort.Float64s(brute)
		const k = 40
		got := BestPairings(c, k)
		if len(got) != k {
			t.Fatalf("trial %d: %d pairings, want %d", trial, len(got), k)
		}
		seen := map[string]bool{}
		for i, p := range got {
			p.mustBePermutation(n)
			if seen[p.String()] {
				t.Errorf("trial %d: %v returned twice", trial, p)
			}
			seen[p.String()] = true
			if v := assignmentCost(c, p); math.Abs(v-brute[i]) > 1e-9 {
				t.Errorf("trial %d: rank %d cost %g, brute force %g", trial, i, v, brute[i])
			}
		}
	}
	// Asking for more than exist returns all feasible, no more.
	c := mat.NewDense(3, 3, []float64{1, 2, 3, 4, 5, 6, 7, 8, 9})
	if got := BestPairings(c, 100); len(got) != 6 {
		t.Errorf("3x3, k=100: %d pairings, want 6", len(got))
	}
	// Infeasible.
	inf := math.Inf(1)
	if got := BestPairings(mat.NewDense(2, 2, []float64{inf, inf, 1, 1}), 3); len(got) != 0 {
		t.Errorf("infeasible: %v", got)
	}
}
