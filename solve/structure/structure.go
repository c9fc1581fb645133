// Package structure analyses the incidence pattern of a system of equations:
// which unknown appears in which equation. It finds a maximum matching of
// equations to unknowns (Hopcroft-Karp), the structural rank, the coarse
// Dulmage-Mendelsohn decomposition into over-determined, square and
// under-determined parts, and the fine decomposition of the square part into
// strongly connected blocks (Tarjan) in block lower-triangular solve order.
//
// Everything here is structural: it looks at which entries of the Jacobian
// can be non-zero, never at their values. A system that is structurally
// singular is singular for every choice of values; a structurally
// non-singular one is non-singular for almost every choice.
//
// All algorithms are iterative, so a chain of a million equations does not
// grow the goroutine stack.
package structure

import "fmt"

// Block is one strongly connected block of the square part: equations that
// must be solved together for the unknowns matched to them. Equations[i] is
// matched to Unknowns[i].
type Block struct {
	Equations []int
	Unknowns  []int
}

// Structure is the result of Analyze.
type Structure struct {
	NumEquations, NumUnknowns int

	// Matching[eq] is the unknown matched to equation eq, or -1. It is a
	// maximum matching (Hopcroft-Karp).
	Matching []int
	// Rank is the structural rank: the size of the matching.
	Rank int

	// Coarse Dulmage-Mendelsohn decomposition. The over-determined part has
	// more equations than unknowns (its unknowns appear in no other
	// equations' matched positions); the under-determined part has more
	// unknowns than equations; the well part is square and structurally
	// non-singular. Indices are sorted.
	OverEquations, OverUnknowns   []int
	UnderEquations, UnderUnknowns []int
	WellEquations, WellUnknowns   []int

	// Blocks is the fine decomposition of the well part into strongly
	// connected components, in solve order: the equations of block b
	// contain only unknowns of blocks 0..b (and of the over-determined
	// part).
	Blocks []Block

	eqs      [][]int // the incidence, equation -> unknowns
	byVar    [][]int // the transpose, unknown -> equations
	matchVar []int   // matchVar[u] = equation matched to u, or -1
}

// Analyze computes the structure of the system whose equation i contains the
// unknowns eqs[i] (indices in [0, n)). eqs is not modified and not retained
// beyond what the returned value needs; duplicates in a row are harmless.
// An index out of range panics: it is a programming error.
func Analyze(eqs [][]int, n int) *Structure {
	m := len(eqs)
	for i, row := range eqs {
		for _, u := range row {
			if u < 0 || u >= n {
				panic(fmt.Sprintf("structure: equation %d has unknown index %d out of range [0,%d)", i, u, n))
			}
		}
	}
	s := &Structure{NumEquations: m, NumUnknowns: n, eqs: eqs}
	s.byVar = transpose(eqs, n)
	s.Matching, s.matchVar, s.Rank = maxMatching(eqs, n)
	s.coarse()
	s.fine()
	return s
}

// MaxMatching returns a maximum matching of equations to unknowns:
// match[eq] is an unknown or -1. It is the matching Analyze computes, for
// callers that need nothing else.
func MaxMatching(eqs [][]int, n int) []int {
	match, _, _ := maxMatching(eqs, n)
	return match
}

// Singular reports whether the system is structurally singular: not square,
// or square with a maximum matching that leaves an equation or an unknown
// out.
func (s *Structure) Singular() bool {
	return s.NumEquations != s.NumUnknowns || s.Rank < s.NumEquations
}

// UnmatchedEquations returns the equations left out of the maximum matching
// (each one is redundant or conflicting with the others, structurally).
func (s *Structure) UnmatchedEquations() []int {
	var out []int
	for e, u := range s.Matching {
		if u < 0 {
			out = append(out, e)
		}
	}
	return out
}

// UnmatchedUnknowns returns the unknowns left out of the maximum matching
// (each one is not fixed by the equations, structurally).
func (s *Structure) UnmatchedUnknowns() []int {
	var out []int
	for u, e := range s.matchVar {
		if e < 0 {
			out = append(out, u)
		}
	}
	return out
}

// Reachable reports which unknowns can move when the equations listed in
// from are perturbed (for example because a parameter appearing in them
// changes). Structurally, perturbing equation e moves the unknown matched to
// e, which perturbs every equation containing that unknown, and so on: the
// result is the set of unknowns of the blocks of the from equations and of
// every block downstream of them. Unknowns left out of the matching never
// move (they are not determined), and unmatched equations move nothing.
// This is exact in the generic sense for a square, structurally non-singular
// system: dx = -J⁻¹ dF has a structurally non-zero entry exactly there.
func (s *Structure) Reachable(from []int) []bool {
	moved := make([]bool, s.NumUnknowns)
	seenEq := make([]bool, s.NumEquations)
	stack := make([]int, 0, len(from))
	for _, e := range from {
		if e < 0 || e >= s.NumEquations {
			panic("structure: Reachable: equation index out of range")
		}
		if !seenEq[e] {
			seenEq[e] = true
			stack = append(stack, e)
		}
	}
	for len(stack) > 0 {
		e := stack[len(stack)-1]
		stack = stack[:len(stack)-1]
		u := s.Matching[e]
		if u < 0 || moved[u] {
			continue
		}
		moved[u] = true
		for _, e2 := range s.byVar[u] {
			if !seenEq[e2] {
				seenEq[e2] = true
				stack = append(stack, e2)
			}
		}
	}
	return moved
}

// EquationsWith returns, in increasing order, the equations in which any of
// the given parameters appears, given the equation -> parameter incidence
// eqParams (eqParams[i] lists the parameters of equation i).
func EquationsWith(eqParams [][]int, params []int) []int {
	want := make(map[int]bool, len(params))
	for _, p := range params {
		want[p] = true
	}
	var out []int
	for e, ps := range eqParams {
		for _, p := range ps {
			if want[p] {
				out = append(out, e)
				break
			}
		}
	}
	return out
}

// Moves answers "can any of these inputs move this output?" structurally.
// eqParams is the equation -> parameter incidence, inputs the parameter
// indices of the inputs, and outputUnknowns the unknowns the output is
// computed from. It reports true when some input appears in an equation
// whose block feeds (is, or is upstream of) a block holding one of the
// output's unknowns. An output that depends on an input parameter directly,
// not through unknowns, is the caller's business.
func (s *Structure) Moves(eqParams [][]int, inputs []int, outputUnknowns []int) bool {
	if len(eqParams) != s.NumEquations {
		panic("structure: Moves: eqParams has wrong length")
	}
	moved := s.Reachable(EquationsWith(eqParams, inputs))
	for _, u := range outputUnknowns {
		if moved[u] {
			return true
		}
	}
	return false
}

func transpose(eqs [][]int, n int) [][]int {
	count := make([]int, n)
	for _, row := range eqs {
		for _, u := range row {
			count[u]++
		}
	}
	flat := make([]int, 0, sum(count))
	out := make([][]int, n)
	for u := range out {
		out[u] = flat[len(flat) : len(flat) : len(flat)+count[u]]
		flat = flat[:len(flat)+count[u]]
	}
	for e, row := range eqs {
		for _, u := range row {
			if k := len(out[u]); k == 0 || out[u][k-1] != e {
				out[u] = append(out[u], e)
			}
		}
	}
	return out
}

func sum(a []int) int {
	t := 0
	for _, v := range a {
		t += v
	}
	return t
}
