package sweep

import (
	"fmt"
	"math"
	"math/rand/v2"
	"slices"
	"sort"
)

// DesignKind names how the points of a sweep are laid out.
type DesignKind string

const (
	// Grid is the full grid: every combination of the axes' points.
	Grid DesignKind = "grid"
	// LHS is a Latin hypercube: each axis cut into N equal strata, one point
	// in each stratum of each axis, strata matched by seeded permutations.
	LHS DesignKind = "lhs"
	// Random is N points drawn uniformly (log-uniformly on log axes) from the
	// box, with a seeded generator.
	Random DesignKind = "random"
)

// Design says how to lay the points. The zero value is a full grid.
type Design struct {
	Kind   DesignKind `json:"kind"`
	Points int        `json:"points,omitempty"` // for LHS and Random: the number of points
	Seed   uint64     `json:"seed,omitempty"`   // for LHS and Random
}

func (d Design) kind() DesignKind {
	if d.Kind == "" {
		return Grid
	}
	return d.Kind
}

// String describes the design: "grid 20 x 20", "lhs 200 points, seed 1".
func (d Design) String() string {
	if d.kind() == Grid {
		return "grid"
	}
	return fmt.Sprintf("%s, %d points, seed %d", d.kind(), d.Points, d.Seed)
}

// ChainLength is the target number of points in one continuation chain of a
// scattered design. It fixes the number of chains independently of the
// number of workers, which keeps results identical whatever -j is.
const ChainLength = 32

// MaxPoints bounds a sweep's size, to turn a typing slip (500 points on
// five axes) into a clear error rather than a run that never ends.
const MaxPoints = 10_000_000

// Step is one point of a continuation chain: Point is solved starting from
// the converged state of Parent, or from the nominal state when Parent is -1
// (or when Parent did not converge).
type Step struct {
	Point  int
	Parent int
}

// Plan is a sweep's design laid out: the points (SI values, point i at
// Point(i)) and the continuation chains that solve them. A Plan is a pure
// function of its axes and design.
type Plan struct {
	Axes   []Axis
	Design Design
	Chains [][]Step // every point is in exactly one chain

	values []float64 // point i's axis values at [i·len(Axes), (i+1)·len(Axes))
	n      int       // points
	dims   []int     // grid: points per axis
}

// Point returns the SI values of the axes at point i, in axis order. The
// slice is the plan's own: do not modify it.
func (p *Plan) Point(i int) []float64 {
	na := len(p.Axes)
	return p.values[i*na : (i+1)*na : (i+1)*na]
}

// NewPlan lays out the design over the axes. The points of a grid are
// numbered in row-major order, the first axis outermost.
func NewPlan(axes []Axis, d Design) (*Plan, error) {
	if len(axes) == 0 {
		return nil, fmt.Errorf("sweep: no axes: give the model an envelope or name an axis")
	}
	seen := map[string]bool{}
	for _, a := range axes {
		if err := a.Check(); err != nil {
			return nil, err
		}
		if seen[a.Name] {
			return nil, fmt.Errorf("axis %s is given twice", a.Name)
		}
		seen[a.Name] = true
	}
	p := &Plan{Axes: axes, Design: d}
	switch d.kind() {
	case Grid:
		total := 1
		for _, a := range axes {
			total *= a.Points
			if total > MaxPoints {
				return nil, fmt.Errorf("sweep: the grid has more than %d points; use fewer points per axis or a scattered design", MaxPoints)
			}
		}
		p.grid()
	case LHS, Random:
		if d.Points < 1 {
			return nil, fmt.Errorf("sweep: design %s needs a number of points (--points N), got %d", d.Kind, d.Points)
		}
		if d.Points > MaxPoints {
			return nil, fmt.Errorf("sweep: %d points is more than %d", d.Points, MaxPoints)
		}
		p.scatter()
	default:
		return nil, fmt.Errorf("sweep: unknown design %q: use grid, lhs or random", d.Kind)
	}
	return p, nil
}

// Len is the number of points.
func (p *Plan) Len() int { return p.n }

// IsGrid reports whether the plan is a full grid.
func (p *Plan) IsGrid() bool { return p.dims != nil }

// Dims returns the points per axis of a grid (nil for scattered designs).
func (p *Plan) Dims() []int { return p.dims }

// GridIndex returns the multi-index of grid point i (axis 0 first).
func (p *Plan) GridIndex(i int) []int {
	idx := make([]int, len(p.dims))
	for a := len(p.dims) - 1; a >= 0; a-- {
		idx[a] = i % p.dims[a]
		i /= p.dims[a]
	}
	return idx
}

func (p *Plan) flat(idx []int) int {
	i := 0
	for a, n := range p.dims {
		i = i*n + idx[a]
	}
	return i
}

// grid lays out the full grid. With two or more axes there is one chain per
// value of the first axis; each chain walks the remaining axes in serpentine
// (boustrophedon) order, so consecutive points are neighbours, and starts
// from the nominal state. A single axis is one chain.
func (p *Plan) grid() {
	p.dims = make([]int, len(p.Axes))
	vals := make([][]float64, len(p.Axes))
	total := 1
	for a, ax := range p.Axes {
		p.dims[a] = ax.Points
		vals[a] = ax.Values()
		total *= ax.Points
	}
	na := len(p.Axes)
	p.n, p.values = total, make([]float64, total*na) // one array, no pointer per point
	idx := make([]int, na)                           // point i's grid index, counted up as i goes
	for i := range total {
		pt := p.Point(i)
		for a, k := range idx {
			pt[a] = vals[a][k]
		}
		for a := na - 1; a >= 0; a-- {
			if idx[a]++; idx[a] < p.dims[a] {
				break
			}
			idx[a] = 0
		}
	}
	if len(p.Axes) == 1 {
		chain := make([]Step, total)
		for i := range chain {
			chain[i] = Step{Point: i, Parent: i - 1}
		}
		p.Chains = [][]Step{chain}
		return
	}
	rest := p.dims[1:]
	clear(idx)
	p.Chains = make([][]Step, 0, p.dims[0])
	for c := 0; c < p.dims[0]; c++ {
		chain := make([]Step, 0, total/p.dims[0])
		prev := -1
		idx[0] = c
		serpentine(rest, func(sub []int) {
			copy(idx[1:], sub)
			i := p.flat(idx)
			chain = append(chain, Step{Point: i, Parent: prev})
			prev = i
		})
		p.Chains = append(p.Chains, chain)
	}
}

// serpentine visits every multi-index of the given sizes so that consecutive
// indices differ by one in exactly one position (a reflected mixed-radix
// Gray order): the last position runs back and forth fastest.
func serpentine(dims []int, visit func([]int)) {
	idx := make([]int, len(dims))
	dir := make([]int, len(dims))
	for i := range dir {
		dir[i] = 1
	}
	total := 1
	for _, n := range dims {
		total *= n
	}
	for k := 0; k < total; k++ {
		visit(idx)
		// Step the fastest position that can move in its direction;
		// positions after it that are at their end reverse.
		for a := len(dims) - 1; a >= 0; a-- {
			next := idx[a] + dir[a]
			if next >= 0 && next < dims[a] {
				idx[a] = next
				break
			}
			dir[a] = -dir[a]
		}
	}
}

// scatter draws the points of a Latin hypercube or random design and groups
// them into chains: points are sorted along the first axis and cut into
// slabs of about ChainLength points; each slab is one chain that starts at
// its point nearest to the nominal point and grows by always solving next
// the unsolved point nearest to a solved one, starting from that one.
func (p *Plan) scatter() {
	n, dim := p.Design.Points, len(p.Axes)
	rng := rand.New(rand.NewPCG(p.Design.Seed, 0x6c6f6f70777269)) // "loopwri"
	u := make([][]float64, n)                                     // unit-cube coordinates
	for i := range u {
		u[i] = make([]float64, dim)
	}
	for a := 0; a < dim; a++ {
		if p.Design.kind() == LHS {
			perm := rng.Perm(n)
			for i := range u {
				u[i][a] = (float64(perm[i]) + rng.Float64()) / float64(n)
			}
		} else {
			for i := range u {
				u[i][a] = rng.Float64()
			}
		}
	}
	p.n, p.values = n, make([]float64, n*dim)
	for i := range u {
		pt := p.Point(i)
		for a, ax := range p.Axes {
			if ax.Points == 1 {
				pt[a] = ax.From
				u[i][a] = 0
				continue
			}
			pt[a] = ax.at(u[i][a])
		}
	}
	nominal := make([]float64, dim)
	for a, ax := range p.Axes {
		nominal[a] = ax.unit(ax.Nominal)
	}

	order := make([]int, n)
	for i := range order {
		order[i] = i
	}
	sort.SliceStable(order, func(x, y int) bool { return u[order[x]][0] < u[order[y]][0] })
	chains := (n + ChainLength - 1) / ChainLength
	for c := 0; c < chains; c++ {
		lo, hi := c*n/chains, (c+1)*n/chains
		slab := append([]int(nil), order[lo:hi]...)
		sort.Ints(slab)
		p.Chains = append(p.Chains, grow(slab, u, nominal))
	}
}

// grow orders a slab of points as a continuation tree (Prim's algorithm on
// distances in the unit cube): start nearest to the nominal point, then
// repeatedly take the unsolved point nearest to any solved point. Ties go to
// the lower point number, so the order is deterministic.
func grow(slab []int, u [][]float64, nominal []float64) []Step {
	dist := func(a, b []float64) float64 {
		s := 0.0
		for k := range a {
			d := a[k] - b[k]
			s += d * d
		}
		return s
	}
	best, start := math.Inf(1), 0
	for k, i := range slab {
		if d := dist(u[i], nominal); d < best {
			best, start = d, k
		}
	}
	done := make([]bool, len(slab))
	near := make([]float64, len(slab)) // distance to the nearest solved point
	from := make([]int, len(slab))     // which solved point that is
	for k := range near {
		near[k] = math.Inf(1)
	}
	steps := make([]Step, 0, len(slab))
	cur, parent := start, -1
	for range slab {
		done[cur] = true
		steps = append(steps, Step{Point: slab[cur], Parent: parent})
		next := -1
		for k := range slab {
			if done[k] {
				continue
			}
			if d := dist(u[slab[k]], u[slab[cur]]); d < near[k] {
				near[k], from[k] = d, slab[cur]
			}
			if next < 0 || near[k] < near[next] {
				next = k
			}
		}
		if next < 0 {
			break
		}
		cur, parent = next, from[next]
	}
	return steps
}

// Neighbours returns the pairs of points between which the summary looks
// for sign changes and switches: grid points one step apart along one axis,
// and for scattered designs the continuation edges (each point and the
// point it was started from). Pairs are (lower, higher), sorted.
func (p *Plan) Neighbours() [][2]int {
	var out [][2]int
	if p.IsGrid() {
		for i := range p.n {
			idx := p.GridIndex(i)
			for a := range idx {
				if idx[a]+1 < p.dims[a] {
					idx[a]++
					out = append(out, [2]int{i, p.flat(idx)})
					idx[a]--
				}
			}
		}
	} else {
		for _, ch := range p.Chains {
			for _, s := range ch {
				if s.Parent >= 0 {
					a, b := s.Parent, s.Point
					if a > b {
						a, b = b, a
					}
					out = append(out, [2]int{a, b})
				}
			}
		}
	}
	sort.Slice(out, func(x, y int) bool {
		if out[x][0] != out[y][0] {
			return out[x][0] < out[y][0]
		}
		return out[x][1] < out[y][1]
	})
	return out
}

// Shard is a share of a sweep for one machine: shard K of N (0 <= K < N).
// The zero value is the whole sweep.
type Shard struct {
	K int `json:"k"`
	N int `json:"n"`
}

// Whole reports whether the shard is the whole sweep.
func (s Shard) Whole() bool { return s.N <= 1 }

func (s Shard) String() string {
	if s.Whole() {
		return "all"
	}
	return fmt.Sprintf("%d/%d", s.K, s.N)
}

// Check reports a shard that does not exist.
func (s Shard) Check() error {
	if s.N < 0 || (s.N > 0 && (s.K < 0 || s.K >= s.N)) {
		return fmt.Errorf("shard %d/%d: K must be in 0..N-1", s.K, s.N)
	}
	return nil
}

// ChainsOf returns the chains that belong to the shard: chain c belongs to
// shard c mod N, so whole chains stay together and a sharded run computes
// exactly what a single run computes.
func (p *Plan) ChainsOf(s Shard) []int {
	var out []int
	for c := range p.Chains {
		if s.Whole() || c%s.N == s.K {
			out = append(out, c)
		}
	}
	return out
}

// PointsOf returns the points of the shard in increasing order: the order
// in which its records are written.
func (p *Plan) PointsOf(s Shard) []int {
	chains := p.ChainsOf(s)
	n := 0
	for _, c := range chains {
		n += len(p.Chains[c])
	}
	out := make([]int, 0, n)
	for _, c := range chains {
		for _, st := range p.Chains[c] {
			out = append(out, st.Point)
		}
	}
	if !slices.IsSorted(out) { // a grid's rows come in order
		slices.Sort(out)
	}
	return out
}
