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

// op is one instruction. For opVar and opParam, a is the index into x or p.
type op struct {
	code opcode
	a, b int32
	c    float64
}

// varRef ties a load instruction to the symbol it loads.
type varRef struct {
	slot  int32 // the load instruction
	index int32 // index into x (or p)
}

// tape computes one scalar: an equation's residual, an output, a define or
// the quantity of a range check.
type tape struct {
	name string
	kind string // "equation", "output", "define", "check"

	ops  []op
	at   []model.Pos // position of each op's formula
	what []string    // what each op is, for messages: "log", "/", "^", "x[3]"
	root int32       // slot of the result

	vars   []varRef // unknowns loaded, sorted by index: the row's pattern
	params []varRef // parameters loaded, sorted by index
}

// forward evaluates the tape into v (len(v) >= len(t.ops)) and returns the
// result.
func (t *tape) forward(v, x, p []float64) float64 {
	v = v[:len(t.ops)]
	for k, o := range t.ops {
		switch o.code {
		case opVar:
			v[k] = x[o.a]
		case opParam:
			v[k] = p[o.a]
		case opConst:
			v[k] = o.c
		case opAdd:
			v[k] = v[o.a] + v[o.b]
		case opSub:
			v[k] = v[o.a] - v[o.b]
		case opMul:
			v[k] = v[o.a] * v[o.b]
		case opDiv:
			v[k] = v[o.a] / v[o.b]
		case opNeg:
			v[k] = -v[o.a]
		case opSq:
			a := v[o.a]
			v[k] = a * a
		case opPowC:
			v[k] = math.Pow(v[o.a], o.c)
		case opPow:
			v[k] = math.Pow(v[o.a], v[o.b])
		case opExp:
			v[k] = math.Exp(v[o.a])
		case opLog:
			v[k] = math.Log(v[o.a])
		case opLog10:
			v[k] = math.Log10(v[o.a])
		case opSqrt:
			v[k] = math.Sqrt(v[o.a])
		case opAbs:
			v[k] = math.Abs(v[o.a])
		case opMin:
			a, b := v[o.a], v[o.b]
			if b < a || b != b {
				a = b
			}
			v[k] = a
		case opMax:
			a, b := v[o.a], v[o.b]
			if b > a || b != b {
				a = b
			}
			v[k] = a
		default:
			panic(fmt.Sprintf("jacobian: unknown opcode %d", o.code))
		}
	}
	return v[t.root]
}

// reverse runs the adjoint sweep after forward: d[k] becomes the derivative
// of the result with respect to the value of slot k. v holds the values of
// the forward sweep.
func (t *tape) reverse(d, v []float64) {
	d = d[:t.root+1]
	clear(d)
	d[t.root] = 1
	for k := int(t.root); k >= 0; k-- {
		g := d[k]
		if g == 0 {
			continue
		}
		o := t.ops[k]
		switch o.code {
		case opVar, opParam, opConst:
		case opAdd:
			d[o.a] += g
			d[o.b] += g
		case opSub:
			d[o.a] += g
			d[o.b] -= g
		case opMul:
			d[o.a] += g * v[o.b]
			d[o.b] += g * v[o.a]
		case opNeg:
			d[o.a] -= g
		case opDiv:
			q := g / v[o.b]
			d[o.a] += q
			d[o.b] -= q * v[k]
		default:
			da, db := partials(o, v, k)
			d[o.a] += g * da
			if o.code.binary() {
				d[o.b] += g * db
			}
		}
	}
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
