package model

import (
	"fmt"
	"math"
	"strings"

	"github.com/loopwright/loopwright/model/formula"
	"github.com/loopwright/loopwright/units"
)

// cerr is an error of a constant expression at a position.
type cerr struct {
	pos Pos
	msg string
}

const maxEvalDepth = 400

// ceval evaluates a constant expression: numbers, constants, bound loop
// indices, arithmetic, comparisons (1 or 0), and, or, not, conditionals,
// the functions and sums over ranges.
func (e *expander) ceval(x formula.Expr, c *ctx, depth int) (float64, *cerr) {
	if depth > maxEvalDepth {
		return 0, &cerr{c.at(x.Offset()), "expression is nested too deeply"}
	}
	// Constant expressions share the node budget, so nested sums cannot
	// run for ever.
	e.node()
	at := func(off int, format string, args ...any) *cerr {
		return &cerr{c.at(off), fmt.Sprintf(format, args...)}
	}
	finite := func(v float64, off int) (float64, *cerr) {
		if math.IsInf(v, 0) || math.IsNaN(v) {
			return 0, at(off, "the constant expression overflows or is undefined")
		}
		return v, nil
	}
	switch x := x.(type) {
	case *formula.Num:
		return x.Value, nil
	case *formula.Ident:
		if v, ok := c.lookup(x.Name); ok {
			return float64(v), nil
		}
		if v, ok := e.consts[x.Name]; ok {
			return v, nil
		}
		return 0, at(x.Off, "%s", e.notConstant(x.Name))
	case *formula.Index:
		return 0, at(x.Off, "%s", e.notConstant(x.Name))
	case *formula.Unary:
		v, err := e.ceval(x.X, c, depth+1)
		if err != nil {
			return 0, err
		}
		if x.Op == "not" {
			return b2f(v == 0), nil
		}
		return -v, nil
	case *formula.Binary:
		l, err := e.ceval(x.L, c, depth+1)
		if err != nil {
			return 0, err
		}
		r, err := e.ceval(x.R, c, depth+1)
		if err != nil {
			return 0, err
		}
		switch x.Op {
		case "+":
			return finite(l+r, x.Off)
		case "-":
			return finite(l-r, x.Off)
		case "*":
			return finite(l*r, x.Off)
		case "/":
			if r == 0 {
				return 0, at(x.Off, "division by zero in a constant expression")
			}
			return finite(l/r, x.Off)
		case "^":
			return finite(math.Pow(l, r), x.Off)
		case "%":
			if l != math.Trunc(l) || r != math.Trunc(r) {
				return 0, at(x.Off, "%% works on whole numbers only, got %s %% %s", fmtNum(l), fmtNum(r))
			}
			if r == 0 {
				return 0, at(x.Off, "modulo by zero in a constant expression")
			}
			return math.Mod(l, r), nil
		}
	case *formula.Compare:
		l, err := e.ceval(x.L, c, depth+1)
		if err != nil {
			return 0, err
		}
		r, err := e.ceval(x.R, c, depth+1)
		if err != nil {
			return 0, err
		}
		switch x.Op {
		case "==":
			return b2f(l == r), nil
		case "!=":
			return b2f(l != r), nil
		case "<":
			return b2f(l < r), nil
		case ">":
			return b2f(l > r), nil
		case "<=":
			return b2f(l <= r), nil
		case ">=":
			return b2f(l >= r), nil
		}
	case *formula.Logical:
		l, err := e.ceval(x.L, c, depth+1)
		if err != nil {
			return 0, err
		}
		if x.Op == "and" && l == 0 {
			return 0, nil
		}
		if x.Op == "or" && l != 0 {
			return 1, nil
		}
		r, err := e.ceval(x.R, c, depth+1)
		if err != nil {
			return 0, err
		}
		return b2f(r != 0), nil
	case *formula.Cond:
		cv, err := e.ceval(x.C, c, depth+1)
		if err != nil {
			return 0, err
		}
		if cv != 0 {
			return e.ceval(x.A, c, depth+1)
		}
		return e.ceval(x.B, c, depth+1)
	case *formula.Call:
		args := make([]float64, len(x.Args))
		for i, a := range x.Args {
			v, err := e.ceval(a, c, depth+1)
			if err != nil {
				return 0, err
			}
			args[i] = v
		}
		v := callValue(Func(x.Fn), args)
		return finite(v, x.Off)
	case *formula.Sum:
		rg, ok := e.rangeOf(x.Loop.Range, c)
		if !ok {
			return 0, at(x.Off, "bad range in sum")
		}
		s := 0.0
		inner := &ctx{m: c.m, env: append(append([]binding(nil), c.env...), binding{x.Loop.Var, 0}), what: c.what}
		for i := rg.lo; i <= rg.hi; i++ {
			inner.env[len(inner.env)-1].v = i
			v, err := e.ceval(x.Body, inner, depth+1)
			if err != nil {
				return 0, err
			}
			s += v
		}
		return finite(s, x.Off)
	}
	panic(fmt.Sprintf("model: unhandled formula node %T", x))
}

func b2f(b bool) float64 {
	if b {
		return 1
	}
	return 0
}

func callValue(fn Func, a []float64) float64 {
	switch fn {
	case FnExp:
		return math.Exp(a[0])
	case FnLog:
		return math.Log(a[0])
	case FnLog10:
		return math.Log10(a[0])
	case FnSqrt:
		return math.Sqrt(a[0])
	case FnAbs:
		return math.Abs(a[0])
	case FnPow:
		return math.Pow(a[0], a[1])
	case FnMin, FnMax:
		v := a[0]
		for _, x := range a[1:] {
			if (fn == FnMin && x < v) || (fn == FnMax && x > v) {
				v = x
			}
		}
		return v
	}
	return math.NaN()
}

// notConstant explains why a name cannot be used where a constant is needed.
func (e *expander) notConstant(name string) string {
	if fam, ok := e.fams[name]; ok {
		return fmt.Sprintf("%q is %s, but only constants and loop indices may appear here (a condition, a range, an index or a when)", name, article(fam.role.String()))
	}
	if _, ok := e.defs[name]; ok {
		return fmt.Sprintf("%q is a define, but only constants and loop indices may appear here (a condition, a range, an index or a when)", name)
	}
	for _, d := range e.f.symbols {
		if d.name == name {
			return fmt.Sprintf("%q is %s, but only constants and loop indices may appear here", name, article(d.kind.String()))
		}
	}
	names := sortedKeys(e.consts)
	if s := nearest(name, names); s != "" {
		return fmt.Sprintf("undefined name %q; did you mean %q?", name, s)
	}
	return fmt.Sprintf("undefined name %q; only constants and loop indices may appear here", name)
}

// node counts one expression node against the limit.
func (e *expander) node() {
	e.nodes++
	if e.nodes > e.maxNodes {
		e.errorf(Pos{File: e.f.Name}, "the expanded model has more than %d expression nodes; reduce the set sizes or the sums", e.maxNodes)
		panic(abort{})
	}
}

func (e *expander) allNames() []string {
	var names []string
	for k := range e.consts {
		names = append(names, k)
	}
	for k := range e.fams {
		names = append(names, k)
	}
	for k := range e.defs {
		names = append(names, k)
	}
	return names
}

func (e *expander) undefined(pos Pos, name, prefix string) {
	// A name declared under a when condition that is false with these
	// constants: say so, rather than suggest a near name.
	// A condition that cannot be evaluated was reported where it stands.
	off := func(w *fx) bool {
		if w == nil {
			return false
		}
		v, err := e.ceval(w.e, &ctx{m: w.m, what: "when condition"}, 0)
		return err == nil && v == 0
	}
	var offs []decl
	for _, s := range e.f.symbols { // inputs and disturbances included
		if s.name == name && off(s.when) {
			offs = append(offs, decl{s.name, s.kind.String(), s.pos, s.when})
		}
	}
	for _, d := range e.f.defines {
		if d.name == name && off(d.when) {
			offs = append(offs, decl{d.name, "define", d.pos, d.when})
		}
	}
	if len(offs) > 0 {
		e.errorf(pos, "%s %q does not exist with these constants: every declaration of it has a when condition that is false; change the constants (--const) or the conditions", prefix, name)
		for _, d := range offs {
			e.errs.addNote(pos, d.pos, "%s %q, when its condition holds", d.what, name)
		}
		return
	}
	e.undefinedIn(pos, name, fmt.Sprintf("%s undefined name %q", prefix, name), e.allNames())
}

func (e *expander) undefinedIn(pos Pos, name, msg string, names []string) {
	if s := nearest(name, names); s != "" {
		e.errorf(pos, "%s; did you mean %q?", msg, s)
		return
	}
	e.errorf(pos, "%s", msg)
}

// translate turns a formula into an expanded node with its dimension.
func (e *expander) translate(x formula.Expr, c *ctx) (val, bool) {
	return e.tr(x, c, 0)
}

func (e *expander) tr(x formula.Expr, c *ctx, depth int) (val, bool) {
	if depth > maxEvalDepth {
		e.errorf(c.at(x.Offset()), "%s: expression is nested too deeply", c.what)
		return val{}, false
	}
	switch x := x.(type) {
	case *formula.Num:
		e.node()
		return val{n: &Const{Pos: c.at(x.Off), Value: x.Value}, any: x.Value == 0}, true
	case *formula.Ident:
		return e.ident(x, c)
	case *formula.Index:
		return e.index(x, c)
	case *formula.Unary:
		if x.Op == "not" {
			e.errorf(c.at(x.Off), "%s: \"not\" gives true/false and can only be part of the condition of c ? a : b", c.what)
			return val{}, false
		}
		v, ok := e.tr(x.X, c, depth+1)
		if !ok {
			return val{}, false
		}
		e.node()
		if k, isK := v.n.(*Const); isK {
			return val{n: &Const{Pos: c.at(x.Off), Value: -k.Value}, d: v.d, any: v.any}, true
		}
		return val{n: &Neg{Pos: c.at(x.Off), X: v.n}, d: v.d, any: v.any}, true
	case *formula.Binary:
		return e.binary(x, c, depth)
	case *formula.Compare, *formula.Logical:
		e.errorf(c.at(x.Offset()), "%s: a comparison gives true/false and can only be the condition of c ? a : b", c.what)
		return val{}, false
	case *formula.Cond:
		cv, err := e.ceval(x.C, c, depth+1)
		if err != nil {
			e.errorf(err.pos, "%s: the condition of c ? a : b must be decidable when the model is expanded: %s", c.what, err.msg)
			return val{}, false
		}
		if cv != 0 {
			return e.tr(x.A, c, depth+1)
		}
		return e.tr(x.B, c, depth+1)
	case *formula.Call:
		return e.call(x, c, depth)
	case *formula.Sum:
		rg, ok := e.rangeOf(x.Loop.Range, c)
		if !ok {
			return val{}, false
		}
		if _, bound := c.lookup(x.Loop.Var); bound {
			e.errorf(c.at(x.Loop.Off), "%s: the sum index %q is already an index here; choose another name", c.what, x.Loop.Var)
			return val{}, false
		}
		inner := &ctx{m: c.m, env: append(append([]binding(nil), c.env...), binding{x.Loop.Var, 0}), what: c.what, def: c.def}
		var acc val
		for i := rg.lo; i <= rg.hi; i++ {
			inner.env[len(inner.env)-1].v = i
			v, ok := e.tr(x.Body, inner, depth+1)
			if !ok {
				return val{}, false
			}
			if i == rg.lo {
				acc = v
				continue
			}
			if !acc.any && !v.any && acc.d != v.d {
				e.errorf(c.at(x.Off), "%s: the terms of the sum differ in dimension: %s against %s", c.what, dimText(acc.d), dimText(v.d))
				return val{}, false
			}
			e.node()
			d := acc.d
			if acc.any {
				d = v.d
			}
			acc = val{n: &Binary{Pos: c.at(x.Off), Op: OpAdd, L: acc.n, R: v.n}, d: d, any: acc.any && v.any}
		}
		return acc, true
	}
	panic(fmt.Sprintf("model: unhandled formula node %T", x))
}

func (e *expander) ident(x *formula.Ident, c *ctx) (val, bool) {
	pos := c.at(x.Off)
	if v, ok := c.lookup(x.Name); ok {
		e.node()
		return val{n: &Const{Pos: pos, Value: float64(v)}}, true
	}
	if v, ok := e.consts[x.Name]; ok {
		e.node()
		return val{n: &Const{Pos: pos, Value: v}}, true
	}
	if fam, ok := e.fams[x.Name]; ok {
		if len(fam.ranges) > 0 {
			e.errorf(pos, "%s: %q is indexed over %s; write %s", c.what, x.Name, rangeNames(fam.ranges), indexHint(x.Name, len(fam.ranges)))
			return val{}, false
		}
		return e.member(fam, 0, pos), true
	}
	if df, ok := e.defs[x.Name]; ok {
		if len(df.ranges) > 0 {
			e.errorf(pos, "%s: define %q is indexed; write %s", c.what, x.Name, indexHint(x.Name, len(df.ranges)))
			return val{}, false
		}
		if !c.def {
			df.used = true
		}
		df.used = df.used || c.def
		return e.defInstance(df, 0, nil)
	}
	if _, ok := e.sets[x.Name]; ok {
		e.errorf(pos, "%s: %q is a set; use it in a for clause or sum(i in %s, ...)", c.what, x.Name, x.Name)
		return val{}, false
	}
	e.undefined(pos, x.Name, c.what+":")
	return val{}, false
}

func rangeNames(rs []irange) string {
	var s []string
	for _, r := range rs {
		s = append(s, r.String())
	}
	return strings.Join(s, " and ")
}

func indexHint(name string, n int) string {
	idx := []string{"i", "j", "k", "l", "m"}
	if n > len(idx) {
		n = len(idx)
	}
	return name + "[" + strings.Join(idx[:n], ",") + "]"
}

func (e *expander) member(fam *family, k int, pos Pos) val {
	e.node()
	fam.used = true
	if fam.unknown {
		return val{n: &Var{Pos: pos, Index: fam.base + k}, d: fam.unit.Dim}
	}
	return val{n: &Param{Pos: pos, Index: fam.base + k}, d: fam.unit.Dim}
}

func (e *expander) index(x *formula.Index, c *ctx) (val, bool) {
	pos := c.at(x.Off)
	var ranges []irange
	fam, isFam := e.fams[x.Name]
	df, isDef := e.defs[x.Name]
	switch {
	case isFam:
		ranges = fam.ranges
	case isDef:
		ranges = df.ranges
	default:
		if _, ok := c.lookup(x.Name); ok {
			e.errorf(pos, "%s: %q is a loop index, not a family; it cannot be indexed", c.what, x.Name)
			return val{}, false
		}
		if _, ok := e.consts[x.Name]; ok {
			e.errorf(pos, "%s: %q is a constant, not a family; it cannot be indexed", c.what, x.Name)
			return val{}, false
		}
		e.undefined(pos, x.Name, c.what+":")
		return val{}, false
	}
	if len(ranges) == 0 {
		e.errorf(pos, "%s: %q is a scalar; write it without [ ]", c.what, x.Name)
		return val{}, false
	}
	if len(x.Args) != len(ranges) {
		e.errorf(pos, "%s: %q takes %d index(es), over %s; got %d", c.what, x.Name, len(ranges), rangeNames(ranges), len(x.Args))
		return val{}, false
	}
	idx := make([]int, len(x.Args))
	k := 0
	for i, a := range x.Args {
		v, err := e.ceval(a, c, 0)
		if err != nil {
			e.errorf(err.pos, "%s: an index must be decidable when the model is expanded: %s", c.what, err.msg)
			return val{}, false
		}
		r := ranges[i]
		if v != math.Trunc(v) {
			e.errorf(pos, "%s: index %s of %q is not a whole number", c.what, fmtNum(v), x.Name)
			return val{}, false
		}
		if v < float64(r.lo) || v > float64(r.hi) {
			e.errorf(pos, "%s: index %s of %q is out of range: %s", c.what, fmtNum(v), x.Name, r)
			return val{}, false
		}
		idx[i] = int(v)
		k = k*r.size() + (int(v) - r.lo)
	}
	if isFam {
		return e.member(fam, k, pos), true
	}
	if !c.def {
		df.used = true
	}
	df.used = df.used || c.def
	return e.defInstance(df, k, idx)
}

// ratOf finds a small rational equal to v, for dimension exponents.
func ratOf(v float64) (units.Rat, bool) {
	if math.Abs(v) > 64 {
		return units.Rat{}, false
	}
	for den := 1; den <= 12; den++ {
		n := v * float64(den)
		if math.Abs(n-math.Round(n)) < 1e-9 {
			return units.R(int(math.Round(n)), den), true
		}
	}
	return units.Rat{}, false
}

// dimPow is d^r, failing (instead of panicking) on exponent overflow.
func dimPow(d units.Dim, r units.Rat) (out units.Dim, ok bool) {
	defer func() {
		if recover() != nil {
			ok = false
		}
	}()
	return d.Pow(r), true
}

func dimMul(a, b units.Dim, div bool) (out units.Dim, ok bool) {
	defer func() {
		if recover() != nil {
			ok = false
		}
	}()
	if div {
		return a.Div(b), true
	}
	return a.Mul(b), true
}

func (e *expander) binary(x *formula.Binary, c *ctx, depth int) (val, bool) {
	l, ok := e.tr(x.L, c, depth+1)
	if !ok {
		return val{}, false
	}
	r, ok := e.tr(x.R, c, depth+1)
	if !ok {
		return val{}, false
	}
	pos := c.at(x.Off)
	lk, lConst := l.n.(*Const)
	rk, rConst := r.n.(*Const)
	out := val{}
	var op Op
	switch x.Op {
	case "+", "-":
		op = OpAdd
		if x.Op == "-" {
			op = OpSub
		}
		if !l.any && !r.any && l.d != r.d {
			e.errorf(pos, "%s: the terms of a sum differ in dimension: %s against %s", c.what, dimText(l.d), dimText(r.d))
			return val{}, false
		}
		out.d, out.any = l.d, l.any && r.any
		if l.any {
			out.d = r.d
		}
	case "*", "/":
		op = OpMul
		if x.Op == "/" {
			op = OpDiv
			if rConst && rk.Value == 0 {
				e.errorf(pos, "%s: division by zero", c.what)
				return val{}, false
			}
		}
		d, ok := dimMul(l.d, r.d, op == OpDiv)
		if !ok {
			e.errorf(pos, "%s: the dimension's exponents grow too large", c.what)
			return val{}, false
		}
		out.d, out.any = d, l.any || (op == OpMul && r.any)
	case "^":
		op = OpPow
		d, ok := e.powDim(l, r, pos, c)
		if !ok {
			return val{}, false
		}
		out.d = d
	case "%":
		if !lConst || !rConst || lk.Value != math.Trunc(lk.Value) || rk.Value != math.Trunc(rk.Value) {
			e.errorf(pos, "%s: %% (remainder) works only on whole-number constants and indices", c.what)
			return val{}, false
		}
		if rk.Value == 0 {
			e.errorf(pos, "%s: remainder by zero", c.what)
			return val{}, false
		}
		e.node()
		return val{n: &Const{Pos: pos, Value: math.Mod(lk.Value, rk.Value)}}, true
	default:
		panic("model: unknown operator " + x.Op)
	}
	e.node()
	if lConst && rConst {
		var v float64
		switch op {
		case OpAdd:
			v = lk.Value + rk.Value
		case OpSub:
			v = lk.Value - rk.Value
		case OpMul:
			v = lk.Value * rk.Value
		case OpDiv:
			v = lk.Value / rk.Value
		case OpPow:
			v = math.Pow(lk.Value, rk.Value)
		}
		if math.IsInf(v, 0) || math.IsNaN(v) {
			e.errorf(pos, "%s: the constant expression overflows or is undefined", c.what)
			return val{}, false
		}
		out.n = &Const{Pos: pos, Value: v}
		return out, true
	}
	out.n = &Binary{Pos: pos, Op: op, L: l.n, R: r.n}
	return out, true
}

// powDim is the dimension of base^exp.
func (e *expander) powDim(base, exp val, pos Pos, c *ctx) (units.Dim, bool) {
	if !exp.any && !exp.d.IsDimensionless() {
		e.errorf(pos, "%s: an exponent must be dimensionless, got %s", c.what, dimText(exp.d))
		return units.Dim{}, false
	}
	if base.any || base.d.IsDimensionless() {
		return units.Dim{}, true
	}
	k, ok := exp.n.(*Const)
	if !ok {
		e.errorf(pos, "%s: the base has dimension %s, so the exponent must be a constant number (it decides the result's dimension)", c.what, dimText(base.d))
		return units.Dim{}, false
	}
	r, ok := ratOf(k.Value)
	if !ok {
		e.errorf(pos, "%s: the base has dimension %s, so the exponent must be a simple fraction such as 2, 0.5 or 1/3, got %s", c.what, dimText(base.d), fmtNum(k.Value))
		return units.Dim{}, false
	}
	d, ok := dimPow(base.d, r)
	if !ok {
		e.errorf(pos, "%s: the dimension's exponents grow too large", c.what)
		return units.Dim{}, false
	}
	return d, true
}

func (e *expander) call(x *formula.Call, c *ctx, depth int) (val, bool) {
	pos := c.at(x.Off)
	args := make([]val, len(x.Args))
	allConst := true
	for i, a := range x.Args {
		v, ok := e.tr(a, c, depth+1)
		if !ok {
			return val{}, false
		}
		args[i] = v
		if _, k := v.n.(*Const); !k {
			allConst = false
		}
	}
	fn := Func(x.Fn)
	out := val{}
	switch fn {
	case FnExp, FnLog, FnLog10:
		if !args[0].any && !args[0].d.IsDimensionless() {
			e.errorf(pos, "%s: %s needs a dimensionless argument, got %s; divide by a reference value", c.what, fn, dimText(args[0].d))
			return val{}, false
		}
	case FnSqrt:
		d, ok := dimPow(args[0].d, units.R(1, 2))
		if !ok {
			e.errorf(pos, "%s: the dimension's exponents grow too large", c.what)
			return val{}, false
		}
		out.d, out.any = d, args[0].any
	case FnAbs:
		out.d, out.any = args[0].d, args[0].any
	case FnMin, FnMax:
		out = args[0]
		for _, a := range args[1:] {
			if !out.any && !a.any && out.d != a.d {
				e.errorf(pos, "%s: the arguments of %s differ in dimension: %s against %s", c.what, fn, dimText(out.d), dimText(a.d))
				return val{}, false
			}
			if out.any {
				out.d, out.any = a.d, a.any
			}
		}
		out.n = nil
	case FnPow:
		d, ok := e.powDim(args[0], args[1], pos, c)
		if !ok {
			return val{}, false
		}
		out.d = d
	default:
		panic("model: unknown function " + x.Fn)
	}
	e.node()
	if allConst {
		vs := make([]float64, len(args))
		for i, a := range args {
			vs[i] = a.n.(*Const).Value
		}
		v := callValue(fn, vs)
		if math.IsInf(v, 0) || math.IsNaN(v) {
			e.errorf(pos, "%s: %s of these constants overflows or is undefined", c.what, fn)
			return val{}, false
		}
		out.n = &Const{Pos: pos, Value: v}
		return out, true
	}
	nodes := make([]Node, len(args))
	for i, a := range args {
		nodes[i] = a.n
	}
	out.n = &Call{Pos: pos, Fn: fn, Args: nodes}
	return out, true
}

func article(s string) string {
	if s != "" && strings.ContainsRune("aeiou", rune(s[0])) {
		return "an " + s
	}
	return "a " + s
}
