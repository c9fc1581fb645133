package sweep

import (
	"math"
	"testing"
)

// Consecutive points of a serpentine differ by one step along one axis, and
// every multi-index is visited once.
func TestSerpentineAdjacent(t *testing.T) {
	for _, dims := range [][]int{{4}, {3, 5}, {2, 3, 4}, {3, 1, 2, 2}} {
		var prev []int
		seen := map[[4]int]bool{}
		total := 1
		for _, n := range dims {
			total *= n
		}
		serpentine(dims, func(idx []int) {
			var key [4]int
			copy(key[:], idx)
			if seen[key] {
				t.Errorf("%v: %v visited twice", dims, idx)
			}
			seen[key] = true
			if prev != nil {
				steps := 0
				for a := range idx {
					steps += abs(idx[a] - prev[a])
				}
				if steps != 1 {
					t.Errorf("%v: %v -> %v is not one step", dims, prev, idx)
				}
			}
			prev = append(prev[:0], idx...)
		})
		if len(seen) != total {
			t.Errorf("%v: %d visited, want %d", dims, len(seen), total)
		}
	}
}

func abs(x int) int {
	if x < 0 {
		return -x
	}
	return x
}

// A Latin hypercube has exactly one point in each of the N strata of each
// axis; every design puts each point in exactly one chain whose first step
// starts from the nominal state and whose other steps start from an earlier
// point of the same chain.
func TestDesigns(t *testing.T) {
	axes := []Axis{
		{Name: "a", From: 1, To: 2, Points: 5, Nominal: 1.5},
		{Name: "b", Param: 1, From: 10, To: 1000, Points: 4, Log: true, Nominal: 100},
		{Name: "c", Param: 2, From: -1, To: 1, Points: 3},
	}
	for _, d := range []Design{{}, {Kind: LHS, Points: 97, Seed: 5}, {Kind: Random, Points: 64, Seed: 5}} {
		p, err := NewPlan(axes, d)
		if err != nil {
			t.Fatal(err)
		}
		in := make([]int, p.Len())
		for _, ch := range p.Chains {
			pos := map[int]bool{}
			for k, s := range ch {
				in[s.Point]++
				if k == 0 && s.Parent != -1 || k > 0 && !pos[s.Parent] {
					t.Errorf("%s: step %d of a chain starts from %d", d, k, s.Parent)
				}
				pos[s.Point] = true
			}
		}
		for i, n := range in {
			if n != 1 {
				t.Errorf("%s: point %d in %d chains", d, i, n)
			}
		}
		if d.Kind == LHS {
			for a, ax := range axes {
				strata := make([]int, d.Points)
				for i := range p.Len() {
					pt := p.Point(i)
					strata[min(int(ax.unit(pt[a])*float64(d.Points)), d.Points-1)]++
				}
				for s, n := range strata {
					if n != 1 {
						t.Errorf("lhs axis %s: stratum %d holds %d points", ax.Name, s, n)
					}
				}
			}
		}
		q, _ := NewPlan(axes, d)
		for i := range p.Len() {
			for a := range p.Point(i) {
				if p.Point(i)[a] != q.Point(i)[a] || math.IsNaN(p.Point(i)[a]) {
					t.Fatalf("%s: the plan is not a function of axes and design", d)
				}
			}
		}
	}
}

func TestPlanErrors(t *testing.T) {
	ok := Axis{Name: "a", From: 0, To: 1, Points: 3}
	for _, tc := range []struct {
		axes []Axis
		d    Design
		want string
	}{
		{nil, Design{}, "no axes"},
		{[]Axis{ok, ok}, Design{}, "given twice"},
		{[]Axis{{Name: "a", From: 0, To: 1, Points: 3, Log: true}}, Design{}, "above zero"},
		{[]Axis{ok}, Design{Kind: LHS}, "needs a number of points"},
		{[]Axis{ok}, Design{Kind: "sobol", Points: 3}, "unknown design"},
	} {
		if _, err := NewPlan(tc.axes, tc.d); err == nil || !contains(err.Error(), tc.want) {
			t.Errorf("%v %v: err %v, want %q", tc.axes, tc.d, err, tc.want)
		}
	}
}

func contains(s, sub string) bool {
	for i := 0; i+len(sub) <= len(s); i++ {
		if s[i:i+len(sub)] == sub {
			return true
		}
	}
	return false
}
