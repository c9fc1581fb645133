package jacobian

import (
	"fmt"
	"math"

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

// instr is one instruction of the lowered form that Eval runs: arithmetic
// only. Operands index the value space w of an Eval, laid out as
//
//	w = [ x (nx) | p (np) | the program's constants | temporaries ]
//
// so loading an unknown, a parameter or a constant costs nothing: operand a
// of an instruction is simply the index of x[j] in w. The value of
// instruction k goes to temporary k, w[base+k]. For opPowC, b is the index of
// the constant exponent; for other unary ops b equals a.
type instr struct {
	code opcode
	a, b int32
}

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
// The lowered form (code) is the arithmetic of the source form, in the same
// order, on the value space of an Eval; it is what forward and reverse run.
// slot maps each source op to the index of its value in w, so the values and
// adjoints of the source form can be gathered when an error is described.
type tape struct {
	name string
	kind string // "equation", "output", "define", "check"

	ops  []op
	at   []model.Pos // position of each op's formula
	what []string    // what each op is, for messages: "log", "/", "^", "x[3]"
	root int32       // slot of the result

	vars   []varRef // unknowns loaded, sorted by index: the row's pattern
	params []varRef // parameters loaded, sorted by index

	code   []instr // lowered form
	base   int32   // index in w of temporary 0
	out    int32   // index in w of the result
	slot   []int32 // index in w of the value of each source op
	leaves []int32 // indices in w of the unknowns, parameters and constants loaded
}

// forward evaluates the lowered tape on the value space w (x, p and the
// constants in place, room for the temporaries) and returns the result. The
// operations and their order are those of the source form.
func (t *tape) forward(w []float64) float64 {
	tmp := w[t.base : int(t.base)+len(t.code)]
	for k, o := range t.code {
		switch o.code {
		case opAdd:
			tmp[k] = w[o.a] + w[o.b]
		case opSub:
			tmp[k] = w[o.a] - w[o.b]
		case opMul:
			tmp[k] = w[o.a] * w[o.b]
		case opDiv:
			tmp[k] = w[o.a] / w[o.b]
		case opNeg:
			tmp[k] = -w[o.a]
		case opSq:
			a := w[o.a]
			tmp[k] = a * a
		case opPowC:
			tmp[k] = math.Pow(w[o.a], w[o.b])
		case opPow:
			tmp[k] = math.Pow(w[o.a], w[o.b])
		case opExp:
			tmp[k] = math.Exp(w[o.a])
		case opLog:
			tmp[k] = math.Log(w[o.a])
		case opLog10:
			tmp[k] = math.Log10(w[o.a])
		case opSqrt:
			tmp[k] = math.Sqrt(w[o.a])
		case opAbs:
			tmp[k] = math.Abs(w[o.a])
		case opMin:
			a, b := w[o.a], w[o.b]
			if b < a || b != b {
				a = b
			}
			tmp[k] = a
		case opMax:
			a, b := w[o.a], w[o.b]
			if b > a || b != b {
				a = b
			}
			tmp[k] = a
		default:
			panic(fmt.Sprintf("jacobian: unknown opcode %d", o.code))
		}
	}
	return w[t.out]
}

// reverse runs the adjoint sweep after forward: d (laid out as w) receives
// the derivative of the result with respect to every temporary and every
// leaf the tape loads; w holds the values of the forward sweep. Adjoints are
// accumulated in the order of the source form's sweep, operand a before
// operand b, so a derivative summed over several uses is the same number.
// The adjoints of leaves the tape does not load are left alone.
func (t *tape) reverse(d, w []float64) {
	for _, l := range t.leaves {
		d[l] = 0
	}
	n := int(t.out) - int(t.base) // temporary holding the result
	if n < 0 {
		d[t.out] = 1 // the result is a leaf
		return
	}
	dt := d[t.base : int(t.base)+n+1]
	vt := w[t.base : int(t.base)+n+1]
	clear(dt)
	dt[n] = 1
	for k := n; k >= 0; k-- {
		g := dt[k]
		if g == 0 {
			continue
		}
		o := t.code[k]
		switch o.code {
		case opAdd:
			d[o.a] += g
			d[o.b] += g
		case opSub:
			d[o.a] += g
			d[o.b] -= g
		case opMul:
			d[o.a] += g * w[o.b]
			d[o.b] += g * w[o.a]
		case opNeg:
			d[o.a] -= g
		case opDiv:
			q := g / w[o.b]
			d[o.a] += q
			d[o.b] -= q * vt[k]
		case opSq:
			d[o.a] += g * (2 * w[o.a])
		case opPowC:
			d[o.a] += g * powPartial(w[o.a], w[o.b], vt[k])
		case opPow:
			a, b, r := w[o.a], w[o.b], vt[k]
			da := powPartial(a, b, r)
			var db float64
			if r != 0 {
				db = r * math.Log(a) // NaN for a < 0: no real derivative
			}
			d[o.a] += g * da
			d[o.b] += g * db
		case opExp:
			d[o.a] += g * vt[k]
		case opLog:
			d[o.a] += g * (1 / w[o.a])
		case opLog10:
			d[o.a] += g * (1 / (w[o.a] * math.Ln10))
		case opSqrt:
			d[o.a] += g * (0.5 / vt[k])
		case opAbs:
			da := 1.0
			if w[o.a] < 0 {
				da = -1
			}
			d[o.a] += g * da
		case opMin, opMax:
			da, db := 1.0, 0.0
			if o.code == opMin && w[o.b] < w[o.a] || o.code == opMax && w[o.b] > w[o.a] {
				da, db = 0, 1
			}
			d[o.a] += g * da
			d[o.b] += g * db
		default:
			panic(fmt.Sprintf("jacobian: unknown opcode %d", o.code))
		}
	}
}

// gather copies the values in w of the source ops 0..n-1 into v, so the
// source form can be examined as it was before lowering.
func (t *tape) gather(v, w []float64, n int) []float64 {
	v = v[:n]
	for k := range v {
		v[k] = w[t.slot[k]]
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
