package structure

import (
	"math/rand/v2"
	"reflect"
	"testing"
)

// tridiagonal returns the incidence of an n-stage column: stage i is linked
// to its neighbours i-1 and i+1 (the binary column of model-format.md).
func tridiagonal(n int) [][]int {
	eqs := make([][]int, n)
	for i := range eqs {
		for j := i - 1; j <= i+1; j++ {
			if j >= 0 && j < n {
				eqs[i] = append(eqs[i], j)
			}
		}
	}
	return eqs
}

// longPath is a system whose greedy matching leaves the last equation out
// and whose only augmenting path is n long: eq i = {i, i+1}, last eq = {0}.
func longPath(n int) [][]int {
	eqs := make([][]int, n)
	for i := 0; i < n-1; i++ {
		eqs[i] = []int{i, i + 1}
	}
	eqs[n-1] = []int{0}
	return eqs
}

func blockEqs(bs []Block) [][]int {
	out := make([][]int, len(bs))
	for i, b := range bs {
		out[i] = b.Equations
	}
	return out
}

func TestAnalyze(t *testing.T) {
	tests := []struct {
		name              string
		eqs               [][]int
		n                 int
		rank              int
		singular          bool
		overEq, overVar   []int
		underEq, underVar []int
		wellEq, wellVar   []int
		blocks            [][]int // equations of each block, in solve order
	}{
		{
			// Two equations in the same single unknown, and an unknown in
			// no equation: rank 1, one equation too many, one unknown free.
			name: "structurally singular", eqs: [][]int{{0}, {0}}, n: 2,
			rank: 1, singular: true,
			overEq: []int{0, 1}, overVar: []int{0},
			underVar: []int{1},
		},
		{
			name: "lower triangular", eqs: [][]int{{0}, {0, 1}, {1, 2}}, n: 3,
			rank: 3, wellEq: []int{0, 1, 2}, wellVar: []int{0, 1, 2},
			blocks: [][]int{{0}, {1}, {2}},
		},
		{
			name: "upper triangular", eqs: [][]int{{0, 1, 2}, {1, 2}, {2}}, n: 3,
			rank: 3, wellEq: []int{0, 1, 2}, wellVar: []int{0, 1, 2},
			blocks: [][]int{{2}, {1}, {0}},
		},
		{
			// syrup dilution (model-format.md): total f_out = f_conc + f_water
			// has f_out only; sugar f_out*s_out = ... has both.
			name: "syrup", eqs: [][]int{{0}, {0, 1}}, n: 2,
			rank: 2, wellEq: []int{0, 1}, wellVar: []int{0, 1},
			blocks: [][]int{{0}, {1}},
		},
		{
			name: "under-determined", eqs: [][]int{{0, 1, 2}, {1, 2}}, n: 3,
			rank: 2, singular: true,
			underEq: []int{0, 1}, underVar: []int{0, 1, 2},
		},
		{
			name: "over part and a square part", eqs: [][]int{{0}, {0}, {0, 1}}, n: 2,
			rank: 2, singular: true,
			overEq: []int{0, 1}, overVar: []int{0},
			wellEq: []int{2}, wellVar: []int{1},
			blocks: [][]int{{2}},
		},
		{
			name: "cycle then tail", eqs: [][]int{{0, 1}, {0, 1}, {1, 2}, {3, 2}}, n: 4,
			rank: 4, wellEq: []int{0, 1, 2, 3}, wellVar: []int{0, 1, 2, 3},
			blocks: [][]int{{0, 1}, {2}, {3}},
		},
		{
			name: "empty", eqs: nil, n: 0,
		},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			s := Analyze(tt.eqs, tt.n)
			if s.Rank != tt.rank {
				t.Errorf("Rank = %d, want %d", s.Rank, tt.rank)
			}
			if s.Singular() != tt.singular {
				t.Errorf("Singular() = %v, want %v", s.Singular(), tt.singular)
			}
			check := func(what string, got, want []int) {
				if len(got) == 0 && len(want) == 0 {
					return
				}
				if !reflect.DeepEqual(got, want) {
					t.Errorf("%s = %v, want %v", what, got, want)
				}
			}
			check("OverEquations", s.OverEquations, tt.overEq)
			check("OverUnknowns", s.OverUnknowns, tt.overVar)
			check("UnderEquations", s.UnderEquations, tt.underEq)
			check("UnderUnknowns", s.UnderUnknowns, tt.underVar)
			check("WellEquations", s.WellEquations, tt.wellEq)
			check("WellUnknowns", s.WellUnknowns, tt.wellVar)
			if got := blockEqs(s.Blocks); !(len(got) == 0 && len(tt.blocks) == 0) && !reflect.DeepEqual(got, tt.blocks) {
				t.Errorf("Blocks = %v, want %v", got, tt.blocks)
			}
			checkInvariants(t, s)
		})
	}
}

func TestColumn41OneBlock(t *testing.T) {
	s := Analyze(tridiagonal(41), 41)
	if s.Singular() || len(s.Blocks) != 1 || len(s.Blocks[0].Equations) != 41 {
		t.Fatalf("41-stage column: singular=%v, %d blocks; want one block of 41", s.Singular(), len(s.Blocks))
	}
	checkInvariants(t, s)
}

// TestLongChain checks that a million-long augmenting path and a
// million-deep block chain do not recurse.
func TestLongChain(t *testing.T) {
	if testing.Short() {
		t.Skip("long chain")
	}
	const n = 1_000_000
	s := Analyze(longPath(n), n)
	if s.Rank != n || len(s.Blocks) != n {
		t.Fatalf("rank %d, %d blocks; want %d and %d", s.Rank, len(s.Blocks), n, n)
	}
	// eq n-1 = {0} must be solved first, then eq 0 for unknown 1, ...
	if s.Blocks[0].Equations[0] != n-1 || s.Blocks[1].Equations[0] != 0 {
		t.Errorf("block order starts %v, %v", s.Blocks[0], s.Blocks[1])
	}
}

// kuhn is a plain augmenting-path matching, the reference for the rank.
func kuhn(eqs [][]int, n int) int {
	matchVar := filled(n, -1)
	size := 0
	for e := range eqs {
		seen := make([]bool, n)
		var try func(e int) bool
		try = func(e int) bool {
			for _, u := range eqs[e] {
				if seen[u] {
					continue
				}
				seen[u] = true
				if matchVar[u] < 0 || try(matchVar[u]) {
					matchVar[u] = e
					return true
				}
			}
			return false
		}
		if try(e) {
			size++
		}
	}
	return size
}

func TestRandomAgainstKuhn(t *testing.T) {
	rnd := rand.New(rand.NewPCG(1, 1))
	for trial := range 300 {
		m, n := 1+rnd.IntN(30), 1+rnd.IntN(30)
		density := 0.02 + 0.2*rnd.Float64()
		eqs := make([][]int, m)
		for i := range eqs {
			for j := range n {
				if rnd.Float64() < density {
					eqs[i] = append(eqs[i], j)
				}
			}
		}
		s := Analyze(eqs, n)
		if want := kuhn(eqs, n); s.Rank != want {
			t.Fatalf("trial %d: rank %d, want %d", trial, s.Rank, want)
		}
		checkInvariants(t, s)
	}
}

// checkInvariants tests what must hold for any system: a valid matching;
// parts that partition equations and unknowns; an over part with more
// equations than unknowns, an under part with more unknowns than equations,
// a square well part; over equations contain only over unknowns; blocks
// cover the well part, and each block's equations use only unknowns solved
// in it or earlier (or over unknowns).
func checkInvariants(t *testing.T, s *Structure) {
	t.Helper()
	size := 0
	usedVar := map[int]bool{}
	for e, u := range s.Matching {
		if u < 0 {
			continue
		}
		size++
		if usedVar[u] {
			t.Fatalf("unknown %d matched twice", u)
		}
		usedVar[u] = true
		if !contains(s.eqs[e], u) {
			t.Fatalf("eq %d matched to unknown %d not in it", e, u)
		}
	}
	if size != s.Rank {
		t.Fatalf("Rank %d but matching has %d", s.Rank, size)
	}
	if got := len(s.OverEquations) + len(s.UnderEquations) + len(s.WellEquations); got != s.NumEquations {
		t.Fatalf("parts cover %d of %d equations", got, s.NumEquations)
	}
	if got := len(s.OverUnknowns) + len(s.UnderUnknowns) + len(s.WellUnknowns); got != s.NumUnknowns {
		t.Fatalf("parts cover %d of %d unknowns", got, s.NumUnknowns)
	}
	if len(s.OverEquations) > 0 && len(s.OverEquations) <= len(s.OverUnknowns) {
		t.Fatalf("over part %v / %v not over-determined", s.OverEquations, s.OverUnknowns)
	}
	if len(s.UnderUnknowns) > 0 && len(s.UnderUnknowns) <= len(s.UnderEquations) {
		t.Fatalf("under part %v / %v not under-determined", s.UnderEquations, s.UnderUnknowns)
	}
	if len(s.WellEquations) != len(s.WellUnknowns) {
		t.Fatalf("well part not square")
	}
	over := map[int]bool{}
	for _, u := range s.OverUnknowns {
		over[u] = true
	}
	for _, e := range s.OverEquations {
		for _, u := range s.eqs[e] {
			if !over[u] {
				t.Fatalf("over equation %d uses unknown %d outside the over part", e, u)
			}
		}
	}
	solved := map[int]bool{}
	nb := 0
	for b, blk := range s.Blocks {
		for _, u := range blk.Unknowns {
			solved[u] = true
		}
		for _, e := range blk.Equations {
			nb++
			for _, u := range s.eqs[e] {
				if !solved[u] && !over[u] {
					t.Fatalf("block %d eq %d needs unknown %d not yet solved", b, e, u)
				}
			}
		}
	}
	if nb != len(s.WellEquations) {
		t.Fatalf("blocks hold %d equations, well part %d", nb, len(s.WellEquations))
	}
}

func contains(a []int, v int) bool {
	for _, x := range a {
		if x == v {
			return true
		}
	}
	return false
}

func TestReachableAndMoves(t *testing.T) {
	// x0 from eq0, x1 from eq1 (uses x0), x2 from eq2 (uses x1), x3 alone.
	eqs := [][]int{{0}, {0, 1}, {1, 2}, {3}}
	// parameters: p0 in eq1, p1 in eq3, p2 nowhere.
	eqParams := [][]int{nil, {0}, nil, {1}}
	s := Analyze(eqs, 4)
	if got, want := s.Reachable([]int{1}), []bool{false, true, true, false}; !reflect.DeepEqual(got, want) {
		t.Errorf("Reachable(eq1) = %v, want %v", got, want)
	}
	tests := []struct {
		inputs, out []int
		want        bool
	}{
		{[]int{0}, []int{2}, true},  // p0 -> eq1 -> x1 -> eq2 -> x2
		{[]int{0}, []int{0}, false}, // x0 is upstream of p0
		{[]int{1}, []int{2}, false}, // x3's block feeds nothing
		{[]int{1}, []int{3}, true},
		{[]int{2}, []int{0, 1, 2, 3}, false}, // p2 appears nowhere
		{[]int{2, 1}, []int{1, 3}, true},
	}
	for _, tt := range tests {
		if got := s.Moves(eqParams, tt.inputs, tt.out); got != tt.want {
			t.Errorf("Moves(inputs %v, output unknowns %v) = %v, want %v", tt.inputs, tt.out, got, tt.want)
		}
	}
}

func BenchmarkAnalyzeChain1e5(b *testing.B) {
	eqs := longPath(100_000)
	b.ReportAllocs()
	for b.Loop() {
		sink = Analyze(eqs, len(eqs))
	}
}

func BenchmarkAnalyzeColumn41(b *testing.B) {
	eqs := tridiagonal(41)
	b.ReportAllocs()
	for b.Loop() {
		sink = Analyze(eqs, len(eqs))
	}
}

var sink *Structure
