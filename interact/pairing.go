package interact

import (
	"container/heap"
	"fmt"
	"iter"
	"math"
	"slices"
	"strings"

	"gonum.org/v1/gonum/mat"
)

// Pairing assigns each output one input: Pairing[i] is the index of the
// input that controls output i. A valid pairing of size n is a permutation
// of 0..n-1.
type Pairing []int

// String prints the pairing with 1-based positions, "y1-u2 y2-u1".
func (p Pairing) String() string {
	var b strings.Builder
	for i, j := range p {
		if i > 0 {
			b.WriteByte(' ')
		}
		fmt.Fprintf(&b, "y%d-u%d", i+1, j+1)
	}
	return b.String()
}

// Label prints the pairing with signal names, "xD-R, xB-S".
func (p Pairing) Label(outputs, inputs []string) string {
	parts := make([]string, len(p))
	for i, j := range p {
		parts[i] = outputs[i] + "-" + inputs[j]
	}
	return strings.Join(parts, ", ")
}

// Compare orders pairings lexicographically, for deterministic ties.
func (p Pairing) Compare(q Pairing) int { return slices.Compare(p, q) }

func (p Pairing) mustBePermutation(n int) {
	if len(p) != n {
		panic(fmt.Sprintf("interact: pairing %v has %d loops for a %dx%d matrix", []int(p), len(p), n, n))
	}
	seen := make([]bool, n)
	for _, j := range p {
		if j < 0 || j >= n || seen[j] {
			panic(fmt.Sprintf("interact: pairing %v is not a permutation of 0..%d", []int(p), n-1))
		}
		seen[j] = true
	}
}

// sign is the sign of the permutation: +1 for an even number of
// transpositions, -1 for odd.
func (p Pairing) sign() int {
	n := len(p)
	if n > 64 {
		return p.signLong()
	}
	var seen uint64
	s := 1
	for i := 0; i < n; i++ {
		if seen&(1<<uint(i)) != 0 {
			continue
		}
		l := 0
		for j := i; seen&(1<<uint(j)) == 0; j = p[j] {
			seen |= 1 << uint(j)
			l++
		}
		if l%2 == 0 {
			s = -s
		}
	}
	return s
}

// signLong is sign for more than 64 loops.
func (p Pairing) signLong() int {
	n := len(p)
	seen := make([]bool, n)
	s := 1
	for i := 0; i < n; i++ {
		if seen[i] {
			continue
		}
		l := 0
		for j := i; !seen[j]; j = p[j] {
			seen[j] = true
			l++
		}
		if l%2 == 0 {
			s = -s
		}
	}
	return s
}

// MaxEnumerate is the largest size for which Analyze enumerates every
// pairing (8! = 40320); beyond it Analyze ranks with BestPairings.
const MaxEnumerate = 8

// Pairings yields every pairing of size n (all n! permutations) in
// lexicographic order, starting with the diagonal pairing. The yielded slice
// is reused between iterations: Clone it to keep it. n < 1 yields nothing.
func Pairings(n int) iter.Seq[Pairing] {
	return func(yield func(Pairing) bool) {
		if n < 1 {
			return
		}
		p := make(Pairing, n)
		for i := range p {
			p[i] = i
		}
		for {
			if !yield(p) {
				return
			}
			if !nextPermutation(p) {
				return
			}
		}
	}
}

// nextPermutation advances p to the next permutation in lexicographic order
// and reports whether there was one.
func nextPermutation(p []int) bool {
	i := len(p) - 2
	for i >= 0 && p[i] >= p[i+1] {
		i--
	}
	if i < 0 {
		return false
	}
	j := len(p) - 1
	for p[j] <= p[i] {
		j--
	}
	p[i], p[j] = p[j], p[i]
	slices.Reverse(p[i+1:])
	return true
}

// BestPairings returns up to k pairings of least total cost Σ_i cost[i][p(i)],
// best first, by Murty's ranking of assignments (Murty 1968), each subproblem
// solved by the Hungarian algorithm (Kuhn 1955, Munkres 1957). +Inf marks a
// forbidden pair. It returns fewer than k only when fewer feasible pairings
// exist; it never truncates silently. Equal costs come out in a deterministic
// order. BestPairings panics if cost is not square or holds NaN.
func BestPairings(cost *mat.Dense, k int) []Pairing {
	n, c := cost.Dims()
	if n != c {
		panic(mat.ErrSquare)
	}
	for i := 0; i < n; i++ {
		for j := 0; j < n; j++ {
			if math.IsNaN(cost.At(i, j)) {
				panic("interact: BestPairings: NaN cost")
			}
		}
	}
	if k <= 0 || n == 0 {
		return nil
	}
	root := &murtyNode{forced: make([]int, n), banned: make([][]bool, n)}
	for i := range root.forced {
		root.forced[i] = -1
		root.banned[i] = make([]bool, n)
	}
	if !root.solve(cost) {
		return nil
	}
	q := &murtyQueue{root}
	var out []Pairing
	for q.Len() > 0 && len(out) < k {
		nd := heap.Pop(q).(*murtyNode)
		out = append(out, nd.sol)
		// Partition the remaining solutions of nd's subproblem: child t
		// keeps the first t assignments of nd's solution (in row order, over
		// rows not already forced) and bans the t-th.
		var free []int
		for i := 0; i < n; i++ {
			if nd.forced[i] < 0 {
				free = append(free, i)
			}
		}
		cur := nd
		for t, i := range free {
			if t == len(free)-1 {
				break // the last free row is determined by the others
			}
			child := cur.clone()
			child.banned[i][nd.sol[i]] = true
			if child.solve(cost) {
				heap.Push(q, child)
			}
			next := cur.clone()
			next.forced[i] = nd.sol[i]
			cur = next
		}
	}
	return out
}

type murtyNode struct {
	forced []int    // forced[i] = j, or -1
	banned [][]bool // banned[i][j]
	sol    Pairing
	cost   float64
}

func (m *murtyNode) clone() *murtyNode {
	c := &murtyNode{forced: slices.Clone(m.forced), banned: make([][]bool, len(m.banned))}
	for i := range m.banned {
		c.banned[i] = slices.Clone(m.banned[i])
	}
	return c
}

// solve finds the best assignment under the node's constraints; false when
// none is feasible.
func (m *murtyNode) solve(cost *mat.Dense) bool {
	n, _ := cost.Dims()
	a := make([][]float64, n)
	for i := 0; i < n; i++ {
		a[i] = make([]float64, n)
		for j := 0; j < n; j++ {
			v := cost.At(i, j)
			switch {
			case m.banned[i][j]:
				v = math.Inf(1)
			case m.forced[i] >= 0 && m.forced[i] != j:
				v = math.Inf(1)
			}
			a[i][j] = v
		}
	}
	// A column forced for one row is forbidden to the others.
	for i, j := range m.forced {
		if j < 0 {
			continue
		}
		for r := 0; r < n; r++ {
			if r != i {
				a[r][j] = math.Inf(1)
			}
		}
	}
	sol, total, ok := hungarian(a)
	if !ok {
		return false
	}
	m.sol, m.cost = sol, total
	return true
}

type murtyQueue []*murtyNode

func (q murtyQueue) Len() int { return len(q) }
func (q murtyQueue) Less(i, j int) bool {
	if q[i].cost != q[j].cost {
		return q[i].cost < q[j].cost
	}
	return q[i].sol.Compare(q[j].sol) < 0
}
func (q murtyQueue) Swap(i, j int) { q[i], q[j] = q[j], q[i] }
func (q *murtyQueue) Push(x any)   { *q = append(*q, x.(*murtyNode)) }
func (q *murtyQueue) Pop() any {
	old := *q
	x := old[len(old)-1]
	*q = old[:len(old)-1]
	return x
}

// hungarian solves the square assignment problem min Σ a[i][p(i)] by the
// shortest augmenting path form of the Hungarian algorithm with potentials,
// O(n³). +Inf entries are forbidden; ok is false when no finite assignment
// exists.
func hungarian(a [][]float64) (p Pairing, total float64, ok bool) {
	n := len(a)
	// Replace +Inf by a cost larger than any finite assignment, then check.
	big := 1.0
	for i := range a {
		for _, v := range a[i] {
			if !math.IsInf(v, 1) {
				big += math.Abs(v)
			}
		}
	}
	big *= float64(n + 1)
	at := func(i, j int) float64 {
		if math.IsInf(a[i][j], 1) {
			return big
		}
		return a[i][j]
	}
	// 1-based arrays as in the classic formulation: u, v potentials,
	// match[j] the row matched to column j, way the augmenting path.
	u := make([]float64, n+1)
	v := make([]float64, n+1)
	match := make([]int, n+1)
	way := make([]int, n+1)
	minv := make([]float64, n+1)
	used := make([]bool, n+1)
	for i := 1; i <= n; i++ {
		match[0] = i
		j0 := 0
		for j := range minv {
			minv[j] = math.Inf(1)
			used[j] = false
		}
		for {
			used[j0] = true
			i0, delta, j1 := match[j0], math.Inf(1), 0
			for j := 1; j <= n; j++ {
				if used[j] {
					continue
				}
				cur := at(i0-1, j-1) - u[i0] - v[j]
				if cur < minv[j] {
					minv[j], way[j] = cur, j0
				}
				if minv[j] < delta {
					delta, j1 = minv[j], j
				}
			}
			for j := 0; j <= n; j++ {
				if used[j] {
					u[match[j]] += delta
					v[j] -= delta
				} else {
					minv[j] -= delta
				}
			}
			j0 = j1
			if match[j0] == 0 {
				break
			}
		}
		for j0 != 0 {
			j1 := way[j0]
			match[j0] = match[j1]
			j0 = j1
		}
	}
	p = make(Pairing, n)
	for j := 1; j <= n; j++ {
		p[match[j]-1] = j - 1
	}
	for i, j := range p {
		if math.IsInf(a[i][j], 1) {
			return nil, 0, false
		}
		total += a[i][j]
	}
	return p, total, true
}
