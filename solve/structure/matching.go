package structure

import (
	"math"
	"sort"
)

// maxMatching is Hopcroft-Karp with an explicit stack: a greedy start, then
// phases of one breadth-first layering from every free equation and one
// depth-first search per free equation along the layers, each equation
// visited at most once per phase. It returns match (equation -> unknown),
// matchVar (unknown -> equation) and the matching size.
func maxMatching(eqs [][]int, n int) (match, matchVar []int, size int) {
	m := len(eqs)
	match = filled(m, -1)
	matchVar = filled(n, -1)
	for e, row := range eqs { // cheap greedy start
		for _, u := range row {
			if matchVar[u] < 0 {
				match[e], matchVar[u] = u, e
				size++
				break
			}
		}
	}
	const inf = math.MaxInt
	dist := make([]int, m)
	next := make([]int, m) // next edge to try from each equation, this phase
	queue := make([]int, 0, m)
	stack := make([]int, 0, 64)
	for {
		queue = queue[:0]
		for e := range m {
			if match[e] < 0 {
				dist[e] = 0
				queue = append(queue, e)
			} else {
				dist[e] = inf
			}
		}
		found := false
		for h := 0; h < len(queue); h++ {
			e := queue[h]
			for _, u := range eqs[e] {
				switch e2 := matchVar[u]; {
				case e2 < 0:
					found = true
				case dist[e2] == inf:
					dist[e2] = dist[e] + 1
					queue = append(queue, e2)
				}
			}
		}
		if !found {
			return match, matchVar, size
		}
		clear(next)
		for e0 := range m {
			if match[e0] >= 0 {
				continue
			}
			stack = append(stack[:0], e0)
			for len(stack) > 0 {
				e := stack[len(stack)-1]
				if next[e] >= len(eqs[e]) {
					dist[e] = inf // dead end for the rest of the phase
					stack = stack[:len(stack)-1]
					continue
				}
				u := eqs[e][next[e]]
				next[e]++
				e2 := matchVar[u]
				if e2 < 0 { // free unknown: flip the path on the stack
					for _, ei := range stack {
						ui := eqs[ei][next[ei]-1]
						match[ei], matchVar[ui] = ui, ei
					}
					size++
					stack = stack[:0]
					break
				}
				if dist[e2] != inf && dist[e2] == dist[e]+1 {
					stack = append(stack, e2)
				}
			}
		}
	}
}

func filled(n, v int) []int {
	s := make([]int, n)
	for i := range s {
		s[i] = v
	}
	return s
}

// coarse splits the system by alternating paths: everything reachable from
// an unmatched unknown is under-determined, everything reachable from an
// unmatched equation is over-determined, the rest is the square part.
func (s *Structure) coarse() {
	m, n := s.NumEquations, s.NumUnknowns
	underEq, underVar := make([]bool, m), make([]bool, n)
	overEq, overVar := make([]bool, m), make([]bool, n)

	var stack []int
	for u := range n {
		if s.matchVar[u] < 0 {
			underVar[u] = true
			stack = append(stack, u)
		}
	}
	for len(stack) > 0 {
		u := stack[len(stack)-1]
		stack = stack[:len(stack)-1]
		for _, e := range s.byVar[u] {
			if underEq[e] {
				continue
			}
			underEq[e] = true
			if u2 := s.Matching[e]; u2 >= 0 && !underVar[u2] {
				underVar[u2] = true
				stack = append(stack, u2)
			}
		}
	}
	for e := range m {
		if s.Matching[e] < 0 {
			overEq[e] = true
			stack = append(stack, e)
		}
	}
	for len(stack) > 0 {
		e := stack[len(stack)-1]
		stack = stack[:len(stack)-1]
		for _, u := range s.eqs[e] {
			if overVar[u] {
				continue
			}
			overVar[u] = true
			if e2 := s.matchVar[u]; e2 >= 0 && !overEq[e2] {
				overEq[e2] = true
				stack = append(stack, e2)
			}
		}
	}
	for e := range m {
		switch {
		case overEq[e]:
			s.OverEquations = append(s.OverEquations, e)
		case underEq[e]:
			s.UnderEquations = append(s.UnderEquations, e)
		default:
			s.WellEquations = append(s.WellEquations, e)
		}
	}
	for u := range n {
		switch {
		case overVar[u]:
			s.OverUnknowns = append(s.OverUnknowns, u)
		case underVar[u]:
			s.UnderUnknowns = append(s.UnderUnknowns, u)
		default:
			s.WellUnknowns = append(s.WellUnknowns, u)
		}
	}
}

// fine finds the strongly connected components of the square part with
// Tarjan's algorithm (explicit stack). The graph has an edge from equation e
// to equation e2 when e contains the unknown matched to e2: e needs e2
// solved first. Tarjan emits a component only after every component it can
// reach, so the emission order is the solve order.
func (s *Structure) fine() {
	m := s.NumEquations
	well := make([]bool, s.NumUnknowns)
	for _, u := range s.WellUnknowns {
		well[u] = true
	}
	index := filled(m, -1)
	low := make([]int, m)
	onStack := make([]bool, m)
	var comp []int
	type frame struct{ e, i int }
	var call []frame
	counter := 0
	for _, root := range s.WellEquations {
		if index[root] >= 0 {
			continue
		}
		index[root], low[root] = counter, counter
		counter++
		comp = append(comp, root)
		onStack[root] = true
		call = append(call, frame{root, 0})
		for len(call) > 0 {
			f := &call[len(call)-1]
			e := f.e
			if f.i < len(s.eqs[e]) {
				u := s.eqs[e][f.i]
				f.i++
				if !well[u] {
					continue
				}
				e2 := s.matchVar[u]
				if e2 == e {
					continue
				}
				if index[e2] < 0 {
					index[e2], low[e2] = counter, counter
					counter++
					comp = append(comp, e2)
					onStack[e2] = true
					call = append(call, frame{e2, 0})
				} else if onStack[e2] && index[e2] < low[e] {
					low[e] = index[e2]
				}
				continue
			}
			call = call[:len(call)-1]
			if len(call) > 0 {
				if p := call[len(call)-1].e; low[e] < low[p] {
					low[p] = low[e]
				}
			}
			if low[e] == index[e] {
				k := len(comp) - 1
				for comp[k] != e {
					k--
				}
				b := Block{Equations: append([]int(nil), comp[k:]...)}
				for _, x := range comp[k:] {
					onStack[x] = false
				}
				comp = comp[:k]
				sort.Ints(b.Equations)
				b.Unknowns = make([]int, len(b.Equations))
				for i, x := range b.Equations {
					b.Unknowns[i] = s.Matching[x]
				}
				s.Blocks = append(s.Blocks, b)
			}
		}
	}
}
