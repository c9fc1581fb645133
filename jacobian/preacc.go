package jacobian

import (
	"math"
	"slices"
)

// Preaccumulation of shared subexpressions for the reverse sweeps that give
// dF/dx.
//
// A value several tapes compute alike (a define such as a tray's vapour
// composition y = alpha*x/(1+(alpha-1)*x), used by two balances) is computed
// once by the forward program, but each tape's reverse sweep walks its ops
// again. When such a value s depends on few unknowns, its derivatives
// ds/dx_j are computed once per evaluation instead, by forward-mode
// differentiation written out as a second forward program (the tangent
// program, run after the values), and each tape's sweep stops at s: one
// chain step per unknown adds g*ds/dx_j to the adjoint of x_j.
//
// The derivatives agree with the full sweep up to rounding (the same
// partial derivatives multiplied and summed in another order), not to the
// bit. Where a value or a partial derivative is not finite the two may
// differ more (an infinite partial times a zero that the full sweep skips);
// Eval then runs the full sweep instead, so results and errors there are
// those of the full sweep.

// Limits of the cost rule.
const (
	preMaxLeaves = 2 // unknowns a preaccumulated value may depend on
	preMinTapes  = 2 // tapes whose sweeps must reach it
)

// tanKind is the form of a tangent (a derivative with respect to one
// unknown) while the tangent program is built: exactly 0, exactly 1, or a
// value in w.
type tanKind uint8

const (
	tanZero tanKind = iota
	tanOne
	tanSlot
)

type tanRef struct {
	kind tanKind
	slot int32
}

// preacc plans and builds the preaccumulation of one group of tapes after
// its forward program f has been scheduled.
type preacc struct {
	l     *lowering
	f     *fwdProgram
	tbase int32 // index in w of the tangent program's temporary 0

	depx   []bool    // per value of w below tbase: depends on x
	leaves [][]int32 // per temporary: the unknowns it depends on (nil when more than preMaxLeaves)
	ok     []bool    // per temporary: every x-dependent op below it has a tangent rule
	steps  []int32   // per temporary: x-dependent ops below it, itself included

	chosen []bool // per temporary: preaccumulated

	code []instr // the tangent program, before scheduling
	cse  map[instr]int32
	memo map[[2]int32]tanRef // (value, unknown) -> tangent
	tan  map[[2]int32]int32  // (chosen value, unknown) -> index in w of ds/dx
}

func (pa *preacc) temp(v int32) (int, bool) {
	i := int(v - pa.l.base)
	return i, v >= pa.l.base && i < len(pa.f.code)
}

// analyse fills depx, leaves, ok and steps.
func (pa *preacc) analyse() {
	l, f := pa.l, pa.f
	pa.depx = make([]bool, int(l.base)+len(f.code))
	for i := range l.nx {
		pa.depx[i] = true
	}
	n := len(f.code)
	pa.leaves = make([][]int32, n)
	pa.ok = make([]bool, n)
	pa.steps = make([]int32, n)
	leavesOf := func(v int32) ([]int32, bool) {
		if v < l.nx {
			return []int32{v}, true
		}
		if i, isTemp := pa.temp(v); isTemp && pa.depx[v] {
			return pa.leaves[i], pa.leaves[i] != nil
		}
		return nil, true
	}
	for i, o := range f.code {
		v := l.base + int32(i)
		ops := []int32{o.a}
		if o.code.binary() {
			ops = append(ops, o.b)
		}
		var lv []int32
		fits, ok := true, tangentRule(o.code)
		for _, a := range ops {
			if !pa.depx[a] {
				continue
			}
			pa.depx[v] = true
			s, f := leavesOf(a)
			fits = fits && f
			for _, x := range s {
				if !slices.Contains(lv, x) {
					lv = append(lv, x)
				}
			}
			if j, isTemp := pa.temp(a); isTemp {
				ok = ok && pa.ok[j]
			}
		}
		if !pa.depx[v] {
			continue
		}
		if fits && len(lv) <= preMaxLeaves {
			slices.Sort(lv)
			pa.leaves[i] = lv
		}
		pa.ok[i] = ok
		if pa.leaves[i] != nil && ok {
			pa.steps[i] = pa.countSteps(v)
		}
	}
}

// countSteps counts the distinct x-dependent temporaries below v, v
// included: the reverse steps a tape reaching v only through v runs for it.
func (pa *preacc) countSteps(v int32) int32 {
	seen := map[int32]bool{}
	var walk func(v int32)
	walk = func(v int32) {
		i, isTemp := pa.temp(v)
		if !isTemp || !pa.depx[v] || seen[v] {
			return
		}
		seen[v] = true
		o := pa.f.code[i]
		walk(o.a)
		if o.code.binary() {
			walk(o.b)
		}
	}
	walk(v)
	return int32(len(seen))
}

// tangentRule reports whether the tangent program can differentiate code:
// every op but min and max, whose derivative depends on a comparison.
func tangentRule(code opcode) bool {
	switch code {
	case opMin, opMax, opChain:
		return false
	}
	return true
}

// choose picks the values to preaccumulate. A candidate depends on x
// through 1..preMaxLeaves unknowns and ops with tangent rules, and has more
// x-dependent ops below it than unknowns. Outer candidates are judged
// first: one is kept when the sweeps of at least preMinTapes tapes reach it
// (stopping at the values kept) and the
// reverse steps it saves pay for its tangents: a tape's sweep runs S steps
// below a value with S x-dependent ops and L unknowns, and a chain step per
// unknown in its place, while the tangents cost about 2*S*L forward
// instructions, each about a third of a reverse step.
func (pa *preacc) choose(tapes []*tape) {
	n := len(pa.f.code)
	pa.chosen = make([]bool, n)
	for i := range n {
		pa.chosen[i] = pa.leaves[i] != nil && pa.ok[i] && int(pa.steps[i]) > len(pa.leaves[i])
	}
	uses := make([]int, n)
	for {
		clear(uses)
		for _, t := range tapes {
			reached := pa.reach(t)
			counted := map[int32]bool{}
			for k, r := range reached {
				s := t.slot[k]
				if i, isTemp := pa.temp(s); r && isTemp && pa.chosen[i] && !counted[s] && t.ops[k].code != opConst {
					counted[s] = true
					uses[i]++
				}
			}
		}
		// Drop the candidates that do not pay among those the sweeps reach;
		// the ones they do not reach sit below others and are judged once
		// those are settled (dropped at the end if still not reached).
		dropped, hidden := false, false
		for i := range n {
			if !pa.chosen[i] {
				continue
			}
			S, L, U := int(pa.steps[i]), len(pa.leaves[i]), uses[i]
			if U >= preMinTapes && 3*U*(S-L) > 2*S*L {
				continue
			}
			if U == 0 {
				hidden = true
				continue
			}
			pa.chosen[i] = false
			dropped = true
		}
		if dropped {
			continue
		}
		if hidden {
			for i := range n {
				if uses[i] == 0 {
					pa.chosen[i] = false
				}
			}
		}
		return
	}
}

// reach marks the ops of t's source form that its x sweep reaches from the
// result when it stops at the chosen values.
func (pa *preacc) reach(t *tape) []bool {
	n := int(t.root) + 1
	reached := make([]bool, n)
	reached[t.root] = true
	for k := n - 1; k >= 0; k-- {
		o := t.ops[k]
		if !reached[k] || !pa.depx[t.slot[k]] {
			continue
		}
		switch o.code {
		case opVar, opParam, opConst:
			continue
		}
		if i, _ := pa.temp(t.slot[k]); pa.chosen[i] {
			continue
		}
		reached[o.a] = true
		if o.code.binary() {
			reached[o.b] = true
		}
	}
	return reached
}

// emit adds an instruction to the tangent program (or finds it there) and
// returns the index in w of its value.
func (pa *preacc) emit(code opcode, a, b int32) int32 {
	in := instr{code: code, a: a, b: b}
	if i, ok := pa.cse[in]; ok {
		return i
	}
	i := pa.tbase + int32(len(pa.code))
	pa.code = append(pa.code, in)
	pa.cse[in] = i
	return i
}

func (pa *preacc) constant(c float64) int32 {
	i, ok := pa.l.pool.idx[math.Float64bits(c)]
	if !ok {
		panic("jacobian: constant missing from the pool of the tangent program")
	}
	return pa.l.nx + pa.l.np + i
}

func (pa *preacc) slotOf(t tanRef) int32 {
	switch t.kind {
	case tanZero:
		return pa.constant(0)
	case tanOne:
		return pa.constant(1)
	}
	return t.slot
}

func (pa *preacc) add(p, q tanRef) tanRef {
	switch {
	case p.kind == tanZero:
		return q
	case q.kind == tanZero:
		return p
	}
	return tanRef{tanSlot, pa.emit(opAdd, pa.slotOf(p), pa.slotOf(q))}
}

func (pa *preacc) sub(p, q tanRef) tanRef {
	switch {
	case q.kind == tanZero:
		return p
	case p.kind == tanZero:
		return pa.neg(q)
	case p.kind == tanOne && q.kind == tanOne:
		return tanRef{}
	}
	return tanRef{tanSlot, pa.emit(opSub, pa.slotOf(p), pa.slotOf(q))}
}

func (pa *preacc) neg(p tanRef) tanRef {
	switch p.kind {
	case tanZero:
		return p
	case tanOne:
		return tanRef{tanSlot, pa.constant(-1)}
	}
	return tanRef{tanSlot, pa.emit(opNeg, p.slot, p.slot)}
}

// mul is the tangent p times the value in w[v].
func (pa *preacc) mul(p tanRef, v int32) tanRef {
	switch p.kind {
	case tanZero:
		return p
	case tanOne:
		return tanRef{tanSlot, v}
	}
	return tanRef{tanSlot, pa.emit(opMul, p.slot, v)}
}

// div is the tangent p divided by the value in w[v].
func (pa *preacc) div(p tanRef, v int32) tanRef {
	if p.kind == tanZero {
		return p
	}
	return tanRef{tanSlot, pa.emit(opDiv, pa.slotOf(p), v)}
}

// tangent returns d w[v] / d x[j], building the instructions that compute
// it. The partial derivatives are those of the reverse sweep (partials)
// where the values are finite; at the points where partials takes another
// branch (abs at 0, a power of 0) the tangent is not finite, and Eval
// falls back to the full sweep.
func (pa *preacc) tangent(v, j int32) tanRef {
	if v < pa.l.nx {
		if v == j {
			return tanRef{kind: tanOne}
		}
		return tanRef{}
	}
	if !pa.depx[v] {
		return tanRef{}
	}
	key := [2]int32{v, j}
	if t, ok := pa.memo[key]; ok {
		return t
	}
	i, _ := pa.temp(v)
	o := pa.f.code[i]
	a, b := o.a, o.b
	ta := pa.tangent(a, j)
	var tb tanRef
	if o.code.binary() {
		tb = pa.tangent(b, j)
	}
	var t tanRef
	switch o.code {
	case opAdd:
		t = pa.add(ta, tb)
	case opSub:
		t = pa.sub(ta, tb)
	case opMul:
		t = pa.add(pa.mul(ta, b), pa.mul(tb, a))
	case opDiv: // (ta - r*tb)/b
		t = pa.div(pa.sub(ta, pa.mul(tb, v)), b)
	case opNeg:
		t = pa.neg(ta)
	case opSq: // 2a*ta
		t = pa.mul(ta, pa.emit(opAdd, a, a))
	case opPowC: // c*r/a*ta, b being the constant c
		if ta.kind != tanZero {
			t = pa.mul(ta, pa.emit(opDiv, pa.emit(opMul, b, v), a))
		}
	case opPow: // b*r/a*ta + r*log(a)*tb
		if ta.kind != tanZero {
			t = pa.mul(ta, pa.emit(opDiv, pa.emit(opMul, b, v), a))
		}
		if tb.kind != tanZero {
			t = pa.add(t, pa.mul(tb, pa.emit(opMul, v, pa.emit(opLog, a, a))))
		}
	case opExp:
		t = pa.mul(ta, v)
	case opLog:
		t = pa.div(ta, a)
	case opLog10:
		t = pa.div(ta, pa.emit(opMul, a, pa.constant(math.Ln10)))
	case opSqrt: // ta/(2r)
		t = pa.div(ta, pa.emit(opAdd, v, v))
	case opAbs: // (r/a)*ta: ±1, not finite at 0
		t = pa.mul(ta, pa.emit(opDiv, v, a))
	default:
		panic("jacobian: no tangent rule for an op chosen for preaccumulation")
	}
	pa.memo[key] = t
	return t
}

// preConstants are the constants the tangent program may need besides those
// of the tapes; Compile adds them to the pool.
var preConstants = []float64{0, 1, -1, math.Ln10}

// preaccumulate chooses the values of the group to preaccumulate and builds
// their tangent program, whose temporaries start after f's, and each tape's
// x sweep that stops at them, in batches, and the number of values chosen.
// It returns nil, nil, 0 when nothing is worth preaccumulating. It adds to each tape's zero list the adjoints of
// unknowns its shortened sweep does not reach.
func (l *lowering) preaccumulate(f *fwdProgram) (*fwdProgram, []batch, int) {
	pa := &preacc{
		l:     l,
		f:     f,
		tbase: l.base + int32(len(f.code)),
		cse:   map[instr]int32{},
		memo:  map[[2]int32]tanRef{},
		tan:   map[[2]int32]int32{},
	}
	pa.analyse()
	pa.choose(l.tapes)
	if !slices.Contains(pa.chosen, true) {
		return nil, nil, 0
	}
	n := 0
	for i, c := range pa.chosen {
		if !c {
			continue
		}
		n++
		v := l.base + int32(i)
		for _, j := range pa.leaves[i] {
			pa.tan[[2]int32{v, j}] = pa.slotOf(pa.tangent(v, j))
		}
	}
	tan, re := scheduleCode(pa.code, pa.tbase)
	for k, s := range pa.tan {
		pa.tan[k] = re(s)
	}
	sweeps := make([]sweep, len(l.tapes))
	for i, t := range l.tapes {
		sweeps[i] = pa.sweep(t)
	}
	return tan, group(sweeps), n
}

// sweep builds t's x sweep that stops at the chosen values: the steps of
// the ops it reaches that depend on x, from the result down, as the source
// form's sweep orders them, a chosen value giving one chain step per
// unknown it depends on (in order of index).
func (pa *preacc) sweep(t *tape) sweep {
	l := pa.l
	n := int(t.root) + 1
	reached := make([]bool, n)
	adjOf := map[int32]int32{} // unknown -> its adjoint in t's region
	for _, vr := range t.vars {
		if int(vr.slot) < n {
			adjOf[vr.index] = t.aslot[vr.slot]
		}
	}
	xReached := map[int32]bool{}
	target := func(s int32) (ta, sa int32) { return t.target(reached, s) }
	// firstX is the adjoint a step reaching unknown x (whose adjoint is
	// adj) adds to: the zero slot unless a chain step reached x before.
	firstX := func(x, adj int32) int32 {
		if xReached[x] {
			return adj
		}
		xReached[x] = true
		return dZero
	}
	var sw sweep
	if n > 0 {
		reached[t.root] = true
	}
	for k := n - 1; k >= 0; k-- {
		o := t.ops[k]
		if !reached[k] || !pa.depx[t.slot[k]] {
			continue
		}
		switch o.code {
		case opVar, opParam, opConst:
			continue
		}
		if i, _ := pa.temp(t.slot[k]); pa.chosen[i] {
			for _, j := range pa.leaves[i] {
				ta, sa := adjOf[j], adjOf[j]
				if !xReached[j] {
					sa = dZero
				}
				xReached[j] = true
				ds := pa.tan[[2]int32{t.slot[k], j}]
				sw.code = append(sw.code, opChain)
				sw.lanes = append(sw.lanes, rlane{va: ds, vb: ds, vk: ds, tk: t.aslot[k], ta: ta, sa: sa, tb: dSink, sb: dZero})
			}
			continue
		}
		if r, code, ok := pa.oneSided(t, k, target, firstX); ok {
			sw.code = append(sw.code, code)
			sw.lanes = append(sw.lanes, r)
			continue
		}
		r := rlane{va: t.slot[o.a], vk: t.slot[k], tk: t.aslot[k]}
		r.ta, r.sa = target(o.a)
		if t.ops[o.a].code == opVar && r.sa == dZero {
			r.sa = firstX(t.ops[o.a].a, r.ta)
		}
		switch {
		case o.code == opPowC:
			r.vb = l.constant(o.c)
			r.tb, r.sb = dSink, dZero
		case o.code.binary():
			r.vb = t.slot[o.b]
			r.tb, r.sb = target(o.b)
			if t.ops[o.b].code == opVar && r.sb == dZero {
				r.sb = firstX(t.ops[o.b].a, r.tb)
			}
		default:
			r.vb = r.va
			r.tb, r.sb = dSink, dZero
		}
		sw.code = append(sw.code, o.code)
		sw.lanes = append(sw.lanes, r)
	}
	for _, vr := range t.vars {
		if int(vr.slot) < n && !reached[vr.slot] && !xReached[vr.index] {
			if a := t.aslot[vr.slot]; !slices.Contains(t.zero, a) {
				t.zero = append(t.zero, a)
			}
		}
	}
	return sw
}

// oneSided returns the step of op k of t (reached, depending on x) as a
// step that adds to one operand only, when it is +, - or * and its other
// operand does not depend on x: that operand's adjoint leads only to
// parameters and constants, so the x sweep need not write it. The operand
// that depends on x receives the same number as from the two-sided step:
// g*w[other] for *, g (as g*1) for + and for the first operand of -, -g for
// the second operand of -.
func (pa *preacc) oneSided(t *tape, k int, target func(int32) (int32, int32), firstX func(x, adj int32) int32) (rlane, opcode, bool) {
	o := t.ops[k]
	switch o.code {
	case opAdd, opSub, opMul:
	default:
		return rlane{}, 0, false
	}
	xa, xb := pa.depx[t.slot[o.a]], pa.depx[t.slot[o.b]]
	if xa == xb {
		return rlane{}, 0, false
	}
	live, other := o.a, o.b
	if xb {
		live, other = o.b, o.a
	}
	r := rlane{tk: t.aslot[k], tb: dSink, sb: dZero}
	r.ta, r.sa = target(live)
	if t.ops[live].code == opVar && r.sa == dZero {
		r.sa = firstX(t.ops[live].a, r.ta)
	}
	code := opChain
	switch {
	case o.code == opMul:
		r.vb = t.slot[other]
	case o.code == opSub && live == o.b:
		code = opNeg
		r.vb = t.slot[live]
	default:
		r.vb = pa.constant(1)
	}
	r.va, r.vk = r.vb, r.vb
	return r, code, true
}
