package jacobian

import (
	"cmp"
	"math"
	"slices"
)

// constPool numbers the distinct constants of a program (by bits, so 0 and
// -0 stay apart) in order of first use.
type constPool struct {
	vals []float64
	idx  map[uint64]int32
}

func (c *constPool) add(v float64) int32 {
	bits := math.Float64bits(v)
	if i, ok := c.idx[bits]; ok {
		return i
	}
	if c.idx == nil {
		c.idx = map[uint64]int32{}
	}
	i := int32(len(c.vals))
	c.vals = append(c.vals, v)
	c.idx[bits] = i
	return i
}

// collect adds the constants of t's source form to the pool.
func (c *constPool) collect(t *tape) {
	for _, o := range t.ops {
		switch o.code {
		case opConst, opPowC:
			c.add(o.c)
		}
	}
}

// lowering builds the forward program of one group of tapes for a value
// space with nx unknowns, np parameters and the constants of pool (every
// constant of the tapes must be in it), and the reverse sweep of each tape.
type lowering struct {
	nx, np int32
	pool   *constPool
	base   int32           // index in w of temporary 0: nx + np + constants
	code   []instr         // the forward program
	cse    map[instr]int32 // instruction -> index in w of its value
	dnext  int32           // start of the next tape's region of d
	tapes  []*tape         // the tapes lowered, in order
	sweeps []sweep         // reverse sweep of each tape, in order
}

// sweep is the reverse sweep of one tape, before batching.
type sweep struct {
	code  []opcode
	lanes []rlane
	deps  []uint8 // for each step, whether its result depends on x (depX), on p (depP)
	ops   []int32 // for each step, the op of the source form it runs
}

// Dependence of a value on the unknowns and on the parameters.
const (
	depX uint8 = 1 << iota
	depP
	depAll = depX | depP
)

func newLowering(nx, np int, pool *constPool) *lowering {
	return &lowering{
		nx:    int32(nx),
		np:    int32(np),
		pool:  pool,
		base:  int32(nx + np + len(pool.vals)),
		cse:   map[instr]int32{},
		dnext: dOne + 1,
	}
}

func (l *lowering) constant(c float64) int32 {
	return l.nx + l.np + l.pool.idx[math.Float64bits(c)]
}

// tape lowers t: its arithmetic joins the forward program, an instruction
// already there (same operation on the same operands, hence the same value)
// being reused; then its reverse sweep is built.
func (l *lowering) tape(t *tape) {
	t.slot = make([]int32, len(t.ops))
	for k, o := range t.ops {
		switch o.code {
		case opVar:
			t.slot[k] = o.a
			continue
		case opParam:
			t.slot[k] = l.nx + o.a
			continue
		case opConst:
			t.slot[k] = l.constant(o.c)
			continue
		}
		in := instr{code: o.code, a: t.slot[o.a]}
		switch {
		case o.code == opPowC:
			in.b = l.constant(o.c)
		case o.code.binary():
			in.b = t.slot[o.b]
		default:
			in.b = in.a
		}
		i, ok := l.cse[in]
		if !ok {
			i = l.base + int32(len(l.code))
			l.code = append(l.code, in)
			l.cse[in] = i
		}
		t.slot[k] = i
	}
	t.out = t.slot[t.root]
	l.tapes = append(l.tapes, t)
	l.reverse(t)
}

// reverse builds the reverse sweep of t, one step per arithmetic op from
// the root down as the source form's sweep visits them, and gives t its
// region of d.
func (l *lowering) reverse(t *tape) {
	n := int(t.root) + 1
	t.adj0 = l.dnext
	t.zero = t.zero[:0]
	t.aslot = make([]int32, n)
	for k := range t.aslot {
		t.aslot[k] = -1
	}
	next := t.adj0
	for _, refs := range [][]varRef{t.vars, t.params} {
		for _, vr := range refs {
			if int(vr.slot) < n {
				t.aslot[vr.slot] = next
			} else {
				t.zero = append(t.zero, next) // loaded after the result: derivative 0
			}
			next++
		}
	}
	var sw sweep
	for k := n - 1; k >= 0; k-- {
		switch o := t.ops[k]; o.code {
		case opVar, opParam:
		case opConst:
			t.aslot[k] = dSink
		default:
			t.aslot[k] = next
			next++
			sw.code = append(sw.code, o.code)
		}
	}
	l.dnext = next
	t.rootAdj = t.aslot[t.root]

	// Operands: the first step to reach one (in sweep order) adds to zero.
	reached := make([]bool, n)
	dep := make([]uint8, n)
	for k := range n {
		switch o := t.ops[k]; o.code {
		case opVar:
			dep[k] = depX
		case opParam:
			dep[k] = depP
		case opConst:
		default:
			dep[k] = dep[o.a]
			if o.code.binary() {
				dep[k] |= dep[o.b]
			}
		}
	}
	target := func(s int32) (ta, sa int32) { return t.target(reached, s) }
	for k := n - 1; k >= 0; k-- {
		o := t.ops[k]
		switch o.code {
		case opVar, opParam, opConst:
			continue
		}
		r := rlane{va: t.slot[o.a], vk: t.slot[k], tk: t.aslot[k]}
		r.ta, r.sa = target(o.a)
		switch {
		case o.code == opPowC:
			r.vb = l.constant(o.c)
			r.tb, r.sb = dSink, dZero
		case o.code.binary():
			r.vb = t.slot[o.b]
			r.tb, r.sb = target(o.b)
		default:
			r.vb = r.va
			r.tb, r.sb = dSink, dZero
		}
		sw.lanes = append(sw.lanes, r)
		sw.deps = append(sw.deps, dep[k])
		sw.ops = append(sw.ops, int32(k))
	}
	for k := range n - 1 {
		if c := t.ops[k].code; c != opConst && !reached[k] {
			t.zero = append(t.zero, t.aslot[k]) // loaded (or computed) but not used
		}
	}
	t.nsteps = len(sw.code)
	l.sweeps = append(l.sweeps, sw)
}

// target is where a reverse step adds to the adjoint of slot s, and what
// it adds to: constants go to the sink; the first step to reach s (in sweep
// order, tracked in reached) adds to the zero slot, so that no adjoint needs
// clearing; later steps add to s's own.
func (t *tape) target(reached []bool, s int32) (ta, sa int32) {
	switch {
	case t.ops[s].code == opConst:
		return dSink, dZero
	case !reached[s]:
		reached[s] = true
		return t.aslot[s], dZero
	}
	return t.aslot[s], t.aslot[s]
}

// batches gathers the sweeps of the tapes lowered so far into batches, one
// per distinct sequence of ops, in order of first appearance, keeping only
// the steps whose result depends on what need asks for. A step whose result
// does not depend on x only passes derivatives on to parameters and
// constants, so dropping it changes no derivative with respect to x (and
// the other way round): every step reaching an x-dependent adjoint is kept,
// the first to reach it included.
func (l *lowering) batches(need uint8) []batch {
	if need == depAll {
		return group(l.sweeps)
	}
	return group(filterSweeps(l.sweeps, func(i, s int) bool { return l.sweeps[i].deps[s]&need != 0 }))
}

// filterSweeps returns the sweeps with only the steps s of sweep i for which
// keep(i, s).
func filterSweeps(sweeps []sweep, keep func(i, s int) bool) []sweep {
	out := make([]sweep, len(sweeps))
	for i, sw := range sweeps {
		for s := range sw.code {
			if keep(i, s) {
				out[i].code = append(out[i].code, sw.code[s])
				out[i].lanes = append(out[i].lanes, sw.lanes[s])
			}
		}
	}
	return out
}

// paramBatches returns the reverse batches of the tapes (whose sweeps are
// given) that keep only the steps whose result depends on one of the
// parameters cols: the derivatives with respect to those parameters are
// those of all steps, to the bit (every step adding to an adjoint that
// depends on them depends on them too, the first to reach it included),
// at a fraction of the cost when the others (a relative volatility, say)
// sit in large subexpressions.
func paramBatches(tapes []*tape, sweeps []sweep, cols []int, np int) []batch {
	sel := make([]bool, np)
	for _, c := range cols {
		sel[c] = true
	}
	deps := make([][]bool, len(tapes))
	for i, t := range tapes {
		d := make([]bool, len(t.ops))
		for k, o := range t.ops {
			switch o.code {
			case opParam:
				d[k] = sel[o.a]
			case opVar, opConst:
			default:
				d[k] = d[o.a] || (o.code.binary() && d[o.b])
			}
		}
		deps[i] = d
	}
	return group(filterSweeps(sweeps, func(i, s int) bool { return deps[i][sweeps[i].ops[s]] }))
}

// group gathers sweeps into batches, one per distinct sequence of ops, in
// order of first appearance.
func group(sweeps []sweep) []batch {
	var out []batch
	var members [][]int
	index := map[string]int{}
	for i, sw := range sweeps {
		if len(sw.code) == 0 {
			continue
		}
		key := string(sw.code)
		b, ok := index[key]
		if !ok {
			b = len(out)
			index[key] = b
			out = append(out, batch{code: sw.code})
			members = append(members, nil)
		}
		members[b] = append(members[b], i)
	}
	for b := range out {
		bt := &out[b]
		bt.k = len(members[b])
		bt.lanes = make([]rlane, len(bt.code)*bt.k)
		for lane, i := range members[b] {
			for s, r := range sweeps[i].lanes {
				bt.lanes[s*bt.k+lane] = r
				for _, v := range []int32{r.va, r.vb, r.vk} {
					if v < 0 {
						panic("jacobian: negative value index")
					}
					bt.wlen = max(bt.wlen, int(v)+1)
				}
				for _, a := range []int32{r.tk, r.ta, r.tb, r.sa, r.sb} {
					if a < 0 {
						panic("jacobian: negative adjoint index")
					}
					bt.dlen = max(bt.dlen, int(a)+1)
				}
			}
		}
	}
	return out
}

// schedule orders the forward program by level (an instruction's level is
// one more than its operands' highest) and, within a level, by op, then
// renumbers the temporaries everywhere they are referred to: the tapes'
// value slots and the reverse steps. The values are unchanged (each is the
// same operation on the same operands); only the order in which independent
// instructions run changes. It returns the program with its runs.
func (l *lowering) schedule() *fwdProgram {
	f, re := scheduleCode(l.code, l.base)
	l.code = f.code
	for _, t := range l.tapes {
		for k, s := range t.slot {
			t.slot[k] = re(s)
		}
		t.out = re(t.out)
	}
	for _, sw := range l.sweeps {
		for i := range sw.lanes {
			r := &sw.lanes[i]
			r.va, r.vb, r.vk = re(r.va), re(r.vb), re(r.vk)
		}
	}
	clear(l.cse) // indices are stale now; no tape may be added after schedule
	return f
}

// scheduleCode orders code, whose instruction k writes w[base+k], by level
// and op into runs, and returns the program with the map from an index in w
// before the ordering to the index after it (indices below base are kept).
func scheduleCode(code []instr, base int32) (*fwdProgram, func(int32) int32) {
	n := len(code)
	level := make([]int32, n)
	for k, o := range code {
		for _, a := range []int32{o.a, o.b} {
			if a >= base {
				level[k] = max(level[k], level[a-base]+1)
			}
		}
	}
	order := make([]int, n)
	for k := range order {
		order[k] = k
	}
	slices.SortStableFunc(order, func(i, j int) int {
		if c := cmp.Compare(level[i], level[j]); c != 0 {
			return c
		}
		return cmp.Compare(code[i].code, code[j].code)
	})
	newIdx := make([]int32, n)
	for k, old := range order {
		newIdx[old] = int32(k)
	}
	re := func(i int32) int32 {
		if i >= base {
			return base + newIdx[i-base]
		}
		return i
	}
	f := &fwdProgram{code: make([]instr, n)}
	for k, old := range order {
		o := code[old]
		o.a, o.b = re(o.a), re(o.b)
		if o.a < 0 || o.b < 0 || o.a >= base+int32(k) || o.b >= base+int32(k) {
			panic("jacobian: forward instruction reads a value not computed before it")
		}
		f.code[k] = o
		if len(f.runs) > 0 && f.runs[len(f.runs)-1].code == o.code {
			f.runs[len(f.runs)-1].n++
		} else {
			f.runs = append(f.runs, run{code: o.code, n: 1})
		}
	}
	// forward relies on the runs covering the code exactly.
	total := 0
	for _, r := range f.runs {
		total += int(r.n)
	}
	if total != n {
		panic("jacobian: forward runs do not cover the program")
	}
	return f, re
}
