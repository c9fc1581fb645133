package jacobian

import (
	"fmt"
	"math"
	"unsafe"

	"github.com/loopwright/loopwright/model"
)

// opcode is one instruction of a tape. The value of instruction k is slot k
// of the value buffer; a and b are the slots of its operands.
type opcode uint8

const (
	opVar   opcode = iota // x[a]
	opParam               // p[a]
	opConst               // c
	opAdd                 // a + b
	opSub                 // a - b
	opMul                 // a * b
	opDiv                 // a / b
	opNeg                 // -a
	opSq                  // a^2 (a constant exponent of 2)
	opPowC                // a^c with c constant
	opPow                 // a^b with b varying
	opExp
	opLog
	opLog10
	opSqrt
	opAbs
	opMin // min(a, b); ties go to a
	opMax // max(a, b); ties go to a

	// opChain is a reverse step only, of a sweep that stops at a
	// preaccumulated value: the adjoint of an unknown receives g*w[vb], the
	// value's derivative with respect to it (preacc.go).
	opChain
)

func (c opcode) binary() bool {
	switch c {
	case opAdd, opSub, opMul, opDiv, opPow, opMin, opMax:
		return true
	}
	return false
}

// op is one instruction of the source form of a tape, as the compiler emits
// it and as error messages describe it. For opVar and opParam, a is the
// index into x or p.
type op struct {
	code opcode
	a, b int32
	c    float64
}

// instr is one instruction of a forward program, the lowered form of the
// arithmetic of a group of tapes (all equations, all outputs, ...) that Eval
// runs. Operands index the value space w of an Eval, laid out as
//
//	w = [ x (nx) | p (np) | the program's constants | temporaries ]
//
// so loading an unknown, a parameter or a constant costs nothing. The value
// of instruction k goes to temporary k, w[base+k]. For opPowC, b is the index
// of the constant exponent; for other unary ops b equals a.
type instr struct {
	code opcode
	a, b int32
}

// rlane is one step of the reverse sweep of one tape: the adjoint of one
// arithmetic op of its source form. Values come from w; adjoints live in a
// second array d, laid out as
//
//	d = [ zero | sink | one | one region per tape of the group ]
//
// where zero always holds 0, sink receives the adjoints of constants,
// which nobody reads, and one always holds 1. A tape's region holds the adjoints of the unknowns it
// loads (in the order of tape.vars), of its parameters (tape.params) and of
// its temporaries, so the sweeps of different tapes never touch the same
// number and may run in any order, interleaved.
//
// The step reads its own adjoint g = d[tk]. An operand's contribution is
// added to d[sa] and stored in d[ta]: sa is ta itself, or the zero slot where
// the step is the first (in the source form's sweep order) to reach the
// operand, so no adjoint needs clearing and every sum is that of a cleared
// array, term by term.
type rlane struct {
	va, vb, vk int32 // indices in w of the operands and of the result
	tk         int32 // index in d of the result's adjoint
	ta, tb     int32 // adjoints of the operands (for unary ops tb is the sink)
	sa, sb     int32 // adjoints the contributions are added to: ta/tb or the zero slot
}

// batch is the reverse sweep of several tapes whose source forms have the
// same sequence of arithmetic ops: step s is code[s] on each lane, the lanes
// of step s being lanes[s*k : (s+1)*k]. One dispatch serves k tapes, and
// their independent chains of adjoints overlap in the processor.
type batch struct {
	code  []opcode
	k     int
	lanes []rlane
	// Every index of a lane is in [0, dlen) for d or [0, wlen) for w, as
	// checked when the batch was built; reverse checks len(d) and len(w)
	// against them once and indexes without further checks.
	dlen, wlen int
}

// Positions of the zero, sink and one slots in d. The one slot always
// holds 1: a plan reads there the derivative of a tape with respect to the
// symbol that is its result (gradPlan).
const (
	dZero = 0
	dSink = 1
	dOne  = 2
)

// varRef ties a load instruction to the symbol it loads.
type varRef struct {
	slot  int32 // the load instruction (source form)
	index int32 // index into x (or p)
}

// tape computes one scalar: an equation's residual, an output, a define or
// the quantity of a range check.
//
// A tape has two forms. The source form (ops, at, what) is one op per
// loaded symbol, constant and operation, each with the position of its
// formula; it is what the compiler emits and what error messages describe.
// The lowered form is what Eval runs: the tape's values are computed by the
// forward program of its group (instr), which computes a value shared by
// several tapes of the group once, with the same operation on the same
// operands; its adjoints by rev. slot and aslot map each source op to its
// value in w and its adjoint in d, so the source form can be examined as it
// would have been evaluated on its own when an error is described.
type tape struct {
	name string
	kind string // "equation", "output", "define", "check"

	ops  []op
	at   []model.Pos // position of each op's formula
	what []string    // what each op is, for messages: "log", "/", "^", "x[3]"
	root int32       // slot of the result

	vars   []varRef // unknowns loaded, sorted by index: the row's pattern
	params []varRef // parameters loaded, sorted by index

	out     int32   // index in w of the result
	adj0    int32   // start of the tape's region of d: unknowns, then parameters
	rootAdj int32   // index in d of the result's adjoint
	nsteps  int     // steps of its reverse sweep (0: the result is a load or a constant)
	zero    []int32 // adjoints in d to clear before the sweep: those no step reaches
	slot    []int32 // index in w of the value of each source op
	aslot   []int32 // index in d of the adjoint of each source op up to root
}

// fwdProgram is the forward program of a group: its instructions in an
// order where each comes after its operands, sorted so that instructions of
// the same op stand together in runs (one dispatch per run), and every
// instruction of a run is independent of the others in it.
type fwdProgram struct {
	code []instr
	runs []run
	id   int // which of its Program's groups it computes, from 1 (Eval.cur)
}

// run is a stretch of n consecutive instructions with the same op.
type run struct {
	code opcode
	n    int32
}

// forward runs f on the value space w (x, p and the constants in place),
// filling the temporaries from w[base]. Operands of instruction k are below
// base+k (checked when f was built) and the runs cover f.code exactly, so
// once w is known to be long enough they are read without further checks.
func forward(f *fwdProgram, w []float64, base int) {
	if len(w) < base+len(f.code) {
		panic("jacobian: value space too short for the program")
	}
	wp := unsafe.Pointer(unsafe.SliceData(w))
	cp := unsafe.Pointer(unsafe.SliceData(f.code)) // instruction k
	out := unsafe.Add(wp, uintptr(base)*8)         // its value, w[base+k]
	for _, r := range f.runs {
		n := uintptr(r.n)
		switch r.code {
		case opAdd:
			for i := range n {
				o := instrAt(cp, i)
				*(*float64)(unsafe.Add(out, i*8)) = *at(wp, o.a) + *at(wp, o.b)
			}
		case opSub:
			for i := range n {
				o := instrAt(cp, i)
				*(*float64)(unsafe.Add(out, i*8)) = *at(wp, o.a) - *at(wp, o.b)
			}
		case opMul:
			for i := range n {
				o := instrAt(cp, i)
				*(*float64)(unsafe.Add(out, i*8)) = *at(wp, o.a) * *at(wp, o.b)
			}
		case opDiv:
			for i := range n {
				o := instrAt(cp, i)
				*(*float64)(unsafe.Add(out, i*8)) = *at(wp, o.a) / *at(wp, o.b)
			}
		default:
			for i := range n {
				*(*float64)(unsafe.Add(out, i*8)) = forwardOther(*instrAt(cp, i), wp)
			}
		}
		cp = unsafe.Add(cp, n*unsafe.Sizeof(instr{}))
		out = unsafe.Add(out, n*8)
	}
}

// instrAt returns instruction i of the array at p. Callers have checked
// that i is in range.
func instrAt(p unsafe.Pointer, i uintptr) *instr {
	return (*instr)(unsafe.Add(p, i*unsafe.Sizeof(instr{})))
}

// forwardOther is the value of an instruction of a less common op.
func forwardOther(o instr, w unsafe.Pointer) float64 {
	a, b := *at(w, o.a), *at(w, o.b)
	switch o.code {
	case opNeg:
		return -a
	case opSq:
		return a * a
	case opPowC, opPow:
		return math.Pow(a, b)
	case opExp:
		return math.Exp(a)
	case opLog:
		return math.Log(a)
	case opLog10:
		return math.Log10(a)
	case opSqrt:
		return math.Sqrt(a)
	case opAbs:
		return math.Abs(a)
	case opMin:
		if b < a || b != b {
			a = b
		}
		return a
	case opMax:
		if b > a || b != b {
			a = b
		}
		return a
	}
	panic(fmt.Sprintf("jacobian: unknown opcode %d", o.code))
}

// seeds are what a group's reverse sweeps start from, gathered from its
// tapes: the adjoints to clear (each tape's zero list) and the adjoints of
// the results, set to 1.
type seeds struct {
	zero, root []int32
}

func newSeeds(tapes []*tape) seeds {
	var s seeds
	for _, t := range tapes {
		s.zero = append(s.zero, t.zero...)
		s.root = append(s.root, t.rootAdj)
	}
	return s
}

// revCode is reverse sweeps as Eval runs them: the steps of their batches
// laid end to end, batch after batch and step after step (the lanes of step
// s of a batch being consecutive already), with consecutive steps of the
// same op joined into one run. One dispatch serves a run; the lanes run in
// exactly the order of the batches, so no number changes.
type revCode struct {
	runs  []run
	lanes []rlane
	// Every index of a lane is in [0, dlen) for d or [0, wlen) for w, as
	// checked when the batches were built; reverse checks len(d) and
	// len(w) against them once and indexes without further checks.
	dlen, wlen int
}

// flatten lays the steps of batches out as a revCode: batch after batch,
// or, when that makes fewer runs, interleaved (mergeSteps).
func flatten(batches []batch) revCode {
	rc := lay(batches, false)
	if len(batches) > 1 && len(batches) <= maxMerged {
		if m := lay(batches, true); len(m.runs) < len(rc.runs) {
			rc = m
		}
	}
	return rc
}

// maxMerged is the most batches flatten tries to interleave (the search
// looks at every batch for every step).
const maxMerged = 64

// lay lays the steps of batches end to end, batch after batch and step
// after step (the lanes of step s of a batch being consecutive already),
// joining consecutive steps of the same op into one run. When merge is
// set, the batches are interleaved instead: each round takes the op of the
// next step of the first batch not done, and the next step of every batch
// whose next step is that op. Either way each tape's steps keep their
// order, and the steps of different tapes touch different adjoints (their
// regions of d; the zero slot is only read, the sink only written), so
// the order across tapes changes no number.
func lay(batches []batch, merge bool) revCode {
	var rc revCode
	add := func(code opcode, lanes []rlane) {
		if n := len(rc.runs); n > 0 && rc.runs[n-1].code == code {
			rc.runs[n-1].n += int32(len(lanes))
		} else {
			rc.runs = append(rc.runs, run{code: code, n: int32(len(lanes))})
		}
		rc.lanes = append(rc.lanes, lanes...)
	}
	next := make([]int, len(batches)) // the next step of each batch
	for b := range batches {
		bt := &batches[b]
		rc.dlen, rc.wlen = max(rc.dlen, bt.dlen), max(rc.wlen, bt.wlen)
		if merge {
			continue
		}
		for s, code := range bt.code {
			add(code, bt.lanes[s*bt.k:(s+1)*bt.k])
		}
	}
	for first := 0; merge && first < len(batches); {
		if next[first] == len(batches[first].code) {
			first++
			continue
		}
		code := batches[first].code[next[first]]
		for b := first; b < len(batches); b++ {
			bt := &batches[b]
			if s := next[b]; s < len(bt.code) && bt.code[s] == code {
				add(code, bt.lanes[s*bt.k:(s+1)*bt.k])
				next[b]++
			}
		}
	}
	n := 0
	for _, r := range rc.runs {
		n += int(r.n)
	}
	if n != len(rc.lanes) {
		panic("jacobian: reverse runs do not cover the lanes")
	}
	return rc
}

// reverse runs the adjoint sweeps of a group's tapes, whose seeds are s and
// whose steps are rc, after the forward program of their group: d receives
// the derivative of each tape's result with respect to its temporaries,
// unknowns and parameters, in the tape's region; w holds the values. Each
// adjoint is accumulated term by term in the order of the source form's
// sweep, operand a before operand b, starting from 0, and a step whose own
// adjoint is 0 is skipped, so every derivative is the same number the
// source form gives.
func reverse(s *seeds, rc *revCode, d, w []float64) {
	for _, z := range s.zero {
		d[z] = 0
	}
	for _, r := range s.root {
		d[r] = 1
	}
	if len(d) < rc.dlen || len(w) < rc.wlen {
		panic("jacobian: work buffers too short for the program")
	}
	dp, wp := unsafe.Pointer(unsafe.SliceData(d)), unsafe.Pointer(unsafe.SliceData(w))
	// The lanes of the run are lanes[lo:hi]: the runs cover rc.lanes
	// exactly (flatten), so the lanes are read without further checks.
	lp := unsafe.Pointer(unsafe.SliceData(rc.lanes))
	var lo uintptr
	for _, r := range rc.runs {
		hi := lo + uintptr(uint32(r.n))
		j0 := lo
		lo = hi
		// One step of the reverse sweep, an op of code r.code, on each lane.
		switch code := r.code; code {
		case opAdd:
			for j := j0; j < hi; j++ {
				o := laneAt(lp, j)
				if g := *at(dp, o.tk); g != 0 {
					*at(dp, o.ta) = *at(dp, o.sa) + g
					*at(dp, o.tb) = *at(dp, o.sb) + g
				} else {
					skip(o, dp)
				}
			}
		case opSub:
			for j := j0; j < hi; j++ {
				o := laneAt(lp, j)
				if g := *at(dp, o.tk); g != 0 {
					*at(dp, o.ta) = *at(dp, o.sa) + g
					*at(dp, o.tb) = *at(dp, o.sb) - g
				} else {
					skip(o, dp)
				}
			}
		case opMul:
			for j := j0; j < hi; j++ {
				o := laneAt(lp, j)
				if g := *at(dp, o.tk); g != 0 {
					*at(dp, o.ta) = *at(dp, o.sa) + g**at(wp, o.vb)
					*at(dp, o.tb) = *at(dp, o.sb) + g**at(wp, o.va)
				} else {
					skip(o, dp)
				}
			}
		case opDiv:
			for j := j0; j < hi; j++ {
				o := laneAt(lp, j)
				if g := *at(dp, o.tk); g != 0 {
					q := g / *at(wp, o.vb)
					*at(dp, o.ta) = *at(dp, o.sa) + q
					*at(dp, o.tb) = *at(dp, o.sb) - q**at(wp, o.vk)
				} else {
					skip(o, dp)
				}
			}
		case opNeg:
			for j := j0; j < hi; j++ {
				o := laneAt(lp, j)
				if g := *at(dp, o.tk); g != 0 {
					*at(dp, o.ta) = *at(dp, o.sa) - g
				} else {
					skip(o, dp)
				}
			}
		case opChain:
			for j := j0; j < hi; j++ {
				o := laneAt(lp, j)
				if g := *at(dp, o.tk); g != 0 {
					*at(dp, o.ta) = *at(dp, o.sa) + g**at(wp, o.vb)
				} else {
					skip(o, dp)
				}
			}
		default:
			for j := j0; j < hi; j++ {
				o := laneAt(lp, j)
				if g := *at(dp, o.tk); g != 0 {
					reverseOther(code, o, g, dp, wp)
				} else {
					skip(o, dp)
				}
			}
		}

	}
}

// laneAt returns lane j of the array at p. Callers have checked that j is
// in range.
func laneAt(p unsafe.Pointer, j uintptr) *rlane {
	return (*rlane)(unsafe.Add(p, j*unsafe.Sizeof(rlane{})))
}

// at returns the element i of the float64 array at p. Callers have checked
// that i is in range.
func at(p unsafe.Pointer, i int32) *float64 {
	return (*float64)(unsafe.Add(p, uintptr(uint32(i))*8))
}

// skip passes over a step whose adjoint is 0: an operand reached first here
// starts from 0.
func skip(o *rlane, d unsafe.Pointer) {
	*at(d, o.ta) = *at(d, o.sa)
	*at(d, o.tb) = *at(d, o.sb)
}

// reverseOther is the step of the less common ops, with adjoint g != 0.
func reverseOther(code opcode, o *rlane, g float64, d, w unsafe.Pointer) {
	switch code {
	case opSq:
		*at(d, o.ta) = *at(d, o.sa) + g*(2**at(w, o.va))
	case opPowC:
		*at(d, o.ta) = *at(d, o.sa) + g*powPartial(*at(w, o.va), *at(w, o.vb), *at(w, o.vk))
	case opPow:
		a, b, r := *at(w, o.va), *at(w, o.vb), *at(w, o.vk)
		da := powPartial(a, b, r)
		var db float64
		if r != 0 {
			db = r * math.Log(a) // NaN for a < 0: no real derivative
		}
		*at(d, o.ta) = *at(d, o.sa) + g*da
		*at(d, o.tb) = *at(d, o.sb) + g*db
	case opExp:
		*at(d, o.ta) = *at(d, o.sa) + g**at(w, o.vk)
	case opLog:
		*at(d, o.ta) = *at(d, o.sa) + g*(1 / *at(w, o.va))
	case opLog10:
		*at(d, o.ta) = *at(d, o.sa) + g*(1/(*at(w, o.va)*math.Ln10))
	case opSqrt:
		*at(d, o.ta) = *at(d, o.sa) + g*(0.5 / *at(w, o.vk))
	case opAbs:
		da := 1.0
		if *at(w, o.va) < 0 {
			da = -1
		}
		*at(d, o.ta) = *at(d, o.sa) + g*da
	case opMin, opMax:
		da, db := 1.0, 0.0
		if code == opMin && *at(w, o.vb) < *at(w, o.va) || code == opMax && *at(w, o.vb) > *at(w, o.va) {
			da, db = 0, 1
		}
		*at(d, o.ta) = *at(d, o.sa) + g*da
		*at(d, o.tb) = *at(d, o.sb) + g*db
	default:
		panic(fmt.Sprintf("jacobian: unknown opcode %d", code))
	}
}

// gather copies into v (len(v) >= n) the numbers of the source ops 0..n-1
// found in z at the indices idx: their values (idx = slot, z = w) or their
// adjoints (idx = aslot, z = d).
func gather(v, z []float64, idx []int32, n int) []float64 {
	v = v[:n]
	for k := range v {
		v[k] = z[idx[k]]
	}
	return v
}

// partials returns the derivatives of op k with respect to its operands a and
// b, given the values of the forward sweep.
func partials(o op, v []float64, k int) (da, db float64) {
	switch o.code {
	case opVar, opParam, opConst:
		return 0, 0
	case opAdd:
		return 1, 1
	case opSub:
		return 1, -1
	case opMul:
		return v[o.b], v[o.a]
	case opDiv:
		return 1 / v[o.b], -v[k] / v[o.b]
	case opNeg:
		return -1, 0
	case opSq:
		return 2 * v[o.a], 0
	case opPowC:
		return powPartial(v[o.a], o.c, v[k]), 0
	case opPow:
		a, b, r := v[o.a], v[o.b], v[k]
		da = powPartial(a, b, r)
		switch {
		case r == 0:
			db = 0 // 0^b for b > 0: flat in b from the only side that exists
		default:
			db = r * math.Log(a) // NaN for a < 0: no real derivative
		}
		return da, db
	case opExp:
		return v[k], 0
	case opLog:
		return 1 / v[o.a], 0
	case opLog10:
		return 1 / (v[o.a] * math.Ln10), 0
	case opSqrt:
		return 0.5 / v[k], 0
	case opAbs:
		if v[o.a] < 0 {
			return -1, 0
		}
		return 1, 0
	case opMin:
		if v[o.b] < v[o.a] {
			return 0, 1
		}
		return 1, 0
	case opMax:
		if v[o.b] > v[o.a] {
			return 0, 1
		}
		return 1, 0
	}
	panic(fmt.Sprintf("jacobian: unknown opcode %d", o.code))
}

// powPartial is d(a^c)/da = c*a^(c-1), given r = a^c.
func powPartial(a, c, r float64) float64 {
	switch {
	case c == 0:
		return 0
	case a != 0 && r != 0 && !math.IsInf(r, 0):
		return c * r / a
	}
	return c * math.Pow(a, c-1)
}

func finite(f float64) bool { return f-f == 0 }

// valueFault finds the first op of the tape whose value is bad (the values
// are those of the last forward sweep) and describes it.
func (t *tape) valueFault(v []float64) *EvalError {
	for k, o := range t.ops[:t.root+1] {
		if msg := opValueFault(o, v, k); msg != "" {
			if o.code == opVar || o.code == opParam {
				msg = t.what[k] + " " + msg
			}
			return t.errAt(k, msg)
		}
	}
	return t.errAt(int(t.root), fmt.Sprintf("value is not finite (%.6g)", v[t.root]))
}

// opValueFault says what is wrong with op k, or "" when nothing is.
func opValueFault(o op, v []float64, k int) string {
	r := v[k]
	var a, b float64
	if o.code != opVar && o.code != opParam && o.code != opConst {
		a = v[o.a]
		if !finite(a) {
			return "" // an earlier op is the culprit
		}
		if o.code.binary() {
			b = v[o.b]
			if !finite(b) {
				return ""
			}
		}
	}
	switch o.code {
	case opVar, opParam, opConst:
		if !finite(r) {
			return fmt.Sprintf("is %.6g", r)
		}
		return ""
	case opLog, opLog10:
		if a <= 0 {
			return fmt.Sprintf("log of a non-positive value (%.6g)", a)
		}
	case opSqrt:
		if a < 0 {
			return fmt.Sprintf("sqrt of a negative value (%.6g)", a)
		}
	case opDiv:
		if b == 0 {
			return fmt.Sprintf("division by zero (numerator %.6g)", a)
		}
	case opPowC, opPow:
		c := o.c
		if o.code == opPow {
			c = b
		}
		if a < 0 && c != math.Trunc(c) {
			return fmt.Sprintf("negative base (%.6g) to a non-integer power (%.6g)", a, c)
		}
		if a == 0 && c < 0 {
			return fmt.Sprintf("zero to a negative power (%.6g)", c)
		}
	}
	if !finite(r) {
		return fmt.Sprintf("result overflows (%.6g)", r)
	}
	return ""
}

// derivFault finds the first op that passes on a derivative but has a
// partial derivative that is not finite, and describes it. v and d hold the
// values and adjoints of the last sweeps (the values all finite).
func (t *tape) derivFault(v, d []float64, wrt string) *EvalError {
	for k, o := range t.ops[:t.root+1] {
		if d[k] == 0 {
			continue // the reverse sweep skipped it
		}
		da, db := partials(o, v, k)
		if !o.code.binary() {
			db = 0
		}
		if finite(da) && finite(db) {
			continue
		}
		a := v[o.a]
		switch {
		case o.code == opPow && a < 0:
			return t.errAt(k, fmt.Sprintf("a negative base (%.6g) to a varying power has no real derivative with respect to the power", a))
		case o.code == opDiv:
			return t.errAt(k, fmt.Sprintf("/ has an infinite derivative (denominator %.6g)", v[o.b]))
		}
		return t.errAt(k, fmt.Sprintf("%s has an infinite derivative at %.6g", t.what[k], a))
	}
	return t.errAt(int(t.root), "derivative with respect to "+wrt+" is not finite")
}

func (t *tape) errAt(k int, msg string) *EvalError {
	return &EvalError{Pos: t.at[k], Equation: t.name, Kind: t.kind, Op: t.what[k], Msg: msg}
}
