package sparse

import (
	"cmp"
	"math"
	"slices"

	"github.com/loopwright/loopwright/solve/structure"
)

// Ordering chooses the column order of the factorisation.
type Ordering int

const (
	// RCM matches rows to columns (maximum transversal) and orders the
	// columns by reverse Cuthill-McKee on the symmetrised pattern of the
	// matched matrix. It is the default.
	RCM Ordering = iota
	// Natural keeps the columns in their given order (the matched row is
	// still the preferred pivot). Useful for tests and for matrices already
	// ordered by their author.
	Natural
)

func (o Ordering) String() string {
	switch o {
	case RCM:
		return "rcm"
	case Natural:
		return "natural"
	}
	return "Ordering(?)"
}

// order returns the column order q (position -> column) and each column's
// preferred pivot row (or -1).
func order(a *CSR, how Ordering) (q, pref []int) {
	n := a.Cols
	// Each row offers its columns in decreasing magnitude, so that the
	// greedy start of the matching, and its searches, favour large entries:
	// the matched entries become the preferred pivots.
	rows := make([][]int, a.Rows)
	flat := make([]int, a.RowPtr[a.Rows])
	for i := range rows {
		lo, hi := a.RowPtr[i], a.RowPtr[i+1]
		row := flat[lo:hi:hi]
		for k := range row {
			row[k] = lo + k // positions first, columns after sorting
		}
		// A total order (ties by position; a NaN last), so any sort gives
		// the same row. slices.SortFunc allocates nothing.
		slices.SortFunc(row, func(x, y int) int {
			if r := cmp.Compare(math.Abs(a.Val[y]), math.Abs(a.Val[x])); r != 0 {
				return r
			}
			return cmp.Compare(x, y)
		})
		for k, p := range row {
			row[k] = a.ColIdx[p]
		}
		rows[i] = row
	}
	match := structure.MaxMatching(rows, n)
	pref = filled(n, -1)
	for r, c := range match {
		if c >= 0 {
			pref[c] = r
		}
	}
	if how == Natural {
		q = make([]int, n)
		for i := range q {
			q[i] = i
		}
		return q, pref
	}
	// Adjacency of the symmetrised matched pattern: column c is linked to
	// every column of its matched row, in both directions.
	deg := make([]int, n)
	for c := range n {
		if r := pref[c]; r >= 0 {
			for _, c2 := range rows[r] {
				if c2 != c {
					deg[c]++
					deg[c2]++
				}
			}
		}
	}
	ptr := make([]int, n+1)
	for c := range n {
		ptr[c+1] = ptr[c] + deg[c]
	}
	adj := make([]int, ptr[n])
	fill := append([]int(nil), ptr[:n]...)
	for c := range n {
		if r := pref[c]; r >= 0 {
			for _, c2 := range rows[r] {
				if c2 != c {
					adj[fill[c]] = c2
					fill[c]++
					adj[fill[c2]] = c
					fill[c2]++
				}
			}
		}
	}
	// Duplicated links (c in row of c2 and c2 in row of c) are harmless for
	// the BFS; the degree used for tie-breaking counts them twice, which
	// still ranks denser columns later.
	visited := make([]bool, n)
	q = make([]int, 0, n)
	level := make([]int, n)
	bfs := func(root int, out []int) []int {
		start := len(out)
		out = append(out, root)
		visited[root] = true
		level[root] = 0
		for h := start; h < len(out); h++ {
			c := out[h]
			nb := out[len(out):]
			for _, c2 := range adj[ptr[c]:ptr[c+1]] {
				if !visited[c2] {
					visited[c2] = true
					level[c2] = level[c] + 1
					nb = append(nb, c2)
				}
			}
			slices.SortFunc(nb, func(x, y int) int {
				if deg[x] != deg[y] {
					return cmp.Compare(deg[x], deg[y])
				}
				return cmp.Compare(x, y)
			})
			out = out[:len(out)+len(nb)]
		}
		return out
	}
	scratch := make([]int, 0, n)
	for c0 := range n {
		if visited[c0] {
			continue
		}
		// Pseudo-peripheral root: start at c0, move to a least-degree node
		// of the last level while the eccentricity grows (a few sweeps).
		root := c0
		ecc := -1
		for range 4 {
			scratch = bfs(root, scratch[:0])
			for _, c := range scratch {
				visited[c] = false
			}
			last := scratch[len(scratch)-1]
			if level[last] <= ecc {
				break
			}
			ecc = level[last]
			best := last
			for _, c := range scratch {
				if level[c] == ecc && deg[c] < deg[best] {
					best = c
				}
			}
			root = best
		}
		q = bfs(root, q)
	}
	for i, j := 0, n-1; i < j; i, j = i+1, j-1 {
		q[i], q[j] = q[j], q[i]
	}
	return q, pref
}

func filled(n, v int) []int {
	s := make([]int, n)
	for i := range s {
		s[i] = v
	}
	return s
}
