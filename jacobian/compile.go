package jacobian

import (
	"errors"
	"fmt"
	"math"
	"slices"
	"sort"

	"github.com/loopwright/loopwright/model"
)

// Program is a compiled model: one tape per equation, output, define and
// range check. It is immutable after Compile and safe for concurrent use through separate
// Evals.
type Program struct {
	nx, np  int
	eqs     []*tape
	outs    []*tape
	defs    []*tape
	checks  []*tape
	pattern *Sparse // structure of dF/dx, Val nil
	eqOut   []int32 // index in w of each equation's residual
	outOut  []int32 // index in w of each output's value, and so on
	defOut  []int32
	chkOut  []int32
	eqAdj   []int32 // index in d of each entry of dF/dx, in the order of pattern
	maxOps  int     // longest tape (source form), for describing errors
	consts  []float64

	// Forward programs of the equations, outputs, defines and checks: the
	// values of all tapes of the group, temporaries from w[base].
	eqFwd, outFwd, defFwd, chkFwd *fwdProgram
	// Reverse sweeps of the equations and of the outputs, in batches: all
	// steps, and only those leading to the unknowns or to the parameters.
	eqRev, outRev revSweeps
	base          int
	size          int // length of w: base + the longest forward program
	dsize         int // length of d: the largest group's adjoint regions
	xNames        []string
	pNames        []string
	xTyp          []float64 // typical magnitudes for finite-difference steps
	pTyp          []float64
}

// Compile compiles the equations, outputs, defines and checks of sys into
// tapes. It fails when a formula made only of constants has no finite value
// or divides by a constant zero (an *EvalError at its position), or when the
// system refers to an unknown or parameter that does not exist. Up to
// maxErrors errors are joined into one.
func Compile(sys *model.System) (*Program, error) {
	prog := &Program{nx: len(sys.Unknowns), np: len(sys.Params)}
	prog.xNames, prog.xTyp = names(sys.Unknowns)
	prog.pNames, prog.pTyp = names(sys.Params)

	c := &compiler{
		prog:   prog,
		memo:   map[model.Node]ref{},
		vars:   map[int]int32{},
		params: map[int]int32{},
		consts: map[uint64]int32{},
	}
	var errs []error
	add := func(tapes []*tape, kind, name string, pos model.Pos, n model.Node) []*tape {
		if len(errs) > maxErrors {
			return tapes
		}
		t, err := c.compile(kind, name, pos, n)
		if err != nil {
			if errs = append(errs, err); len(errs) > maxErrors {
				errs[maxErrors] = fmt.Errorf("jacobian: too many errors")
			}
			return tapes
		}
		prog.maxOps = max(prog.maxOps, len(t.ops))
		return append(tapes, t)
	}
	for _, eq := range sys.Equations {
		prog.eqs = add(prog.eqs, "equation", eq.Name, eq.Pos, eq.Residual)
	}
	for _, o := range sys.Outputs {
		prog.outs = add(prog.outs, "output", o.Name, o.Pos, o.Expr)
	}
	for _, d := range sys.Defines {
		prog.defs = add(prog.defs, "define", d.Name, d.Pos, d.Expr)
	}
	for _, k := range sys.Checks {
		prog.checks = add(prog.checks, "check", k.Name, k.Pos, k.Expr)
	}
	if len(errs) > 0 {
		return nil, errors.Join(errs...)
	}

	all := [][]*tape{prog.eqs, prog.outs, prog.defs, prog.checks}
	var pool constPool
	for _, ts := range all {
		for _, t := range ts {
			pool.collect(t)
		}
	}
	for _, c := range preConstants {
		pool.add(c)
	}
	prog.consts = pool.vals
	prog.base = prog.nx + prog.np + len(pool.vals)
	prog.size = prog.base
	lower := func(ts []*tape, pre bool) (*fwdProgram, revSweeps) {
		l := newLowering(prog.nx, prog.np, &pool)
		for _, t := range ts {
			l.tape(t)
		}
		f := l.schedule()
		prog.size = max(prog.size, prog.base+len(f.code))
		prog.dsize = max(prog.dsize, int(l.dnext))
		rev := revSweeps{all: flatten(l.batches(depAll)), x: flatten(l.batches(depX)), p: flatten(l.batches(depP)), sweeps: l.sweeps}
		if pre {
			var xPre []batch
			rev.tan, xPre, rev.npre = l.preaccumulate(f)
			rev.xPre = flatten(xPre)
			if rev.tan != nil {
				rev.tanBase = prog.base + len(f.code)
				prog.size = max(prog.size, rev.tanBase+len(rev.tan.code))
			}
		}
		rev.seeds = newSeeds(ts) // after preaccumulate, which adds to the zero lists
		return f, rev
	}
	prog.eqFwd, prog.eqRev = lower(prog.eqs, true) // dF/dx: preaccumulated
	prog.outFwd, prog.outRev = lower(prog.outs, false)
	prog.defFwd, _ = lower(prog.defs, false) // reverse sweeps kept only for describing errors
	prog.chkFwd, _ = lower(prog.checks, false)
	for id, f := range []*fwdProgram{prog.eqFwd, prog.outFwd, prog.defFwd, prog.chkFwd} {
		f.id = id + 1
	}

	pat := &Sparse{Rows: len(prog.eqs), Cols: prog.nx, RowPtr: make([]int, len(prog.eqs)+1)}
	for i, t := range prog.eqs {
		for _, r := range t.vars {
			pat.ColIdx = append(pat.ColIdx, int(r.index))
		}
		pat.RowPtr[i+1] = len(pat.ColIdx)
	}
	prog.pattern = pat
	for _, t := range prog.eqs {
		prog.eqOut = append(prog.eqOut, t.out)
		for k := range t.vars {
			prog.eqAdj = append(prog.eqAdj, t.adj0+int32(k))
		}
	}
	prog.outOut, prog.defOut, prog.chkOut = outSlots(prog.outs), outSlots(prog.defs), outSlots(prog.checks)
	// Eval reads w and d at these indices without further checks.
	for _, idx := range [][]int32{prog.eqOut, prog.outOut, prog.defOut, prog.chkOut} {
		for _, k := range idx {
			if k < 0 || int(k) >= prog.size {
				panic("jacobian: a result outside the value space")
			}
		}
	}
	for _, k := range prog.eqAdj {
		if k < 0 || int(k) >= prog.dsize {
			panic("jacobian: a derivative outside the adjoints")
		}
	}
	return prog, nil
}

// revSweeps are the reverse sweeps of a group of tapes, all steps or only
// those whose result depends on x or on p.
type revSweeps struct {
	seeds
	all, x, p revCode
	sweeps    []sweep // every step of every tape, for paramBatches

	// The x sweeps stopping at preaccumulated values (xPre), after the
	// tangent program tan, whose temporaries start at w[tanBase], has run;
	// nil when the group has nothing worth preaccumulating (preacc.go).
	tan     *fwdProgram
	tanBase int
	xPre    revCode
	npre    int // values preaccumulated
}

// outSlots returns the index in w of each tape's result.
func outSlots(tapes []*tape) []int32 {
	s := make([]int32, len(tapes))
	for i, t := range tapes {
		s[i] = t.out
	}
	return s
}

// maxErrors is the number of errors Compile reports before it stops.
const maxErrors = 10

func names(syms []model.Symbol) ([]string, []float64) {
	n := make([]string, len(syms))
	typ := make([]float64, len(syms))
	for i, s := range syms {
		n[i] = s.Name
		typ[i] = math.Abs(s.Value)
		if typ[i] == 0 || !finite(typ[i]) {
			typ[i] = 1
		}
	}
	return n, typ
}

// NumEquations returns the number of equations: the length of the residual.
func (p *Program) NumEquations() int { return len(p.eqs) }

// NumUnknowns returns the number of unknowns: the length of x.
func (p *Program) NumUnknowns() int { return p.nx }

// NumParams returns the number of parameters: the length of p.
func (p *Program) NumParams() int { return p.np }

// NumOutputs returns the number of outputs.
func (p *Program) NumOutputs() int { return len(p.outs) }

// NumDefines returns the number of defines.
func (p *Program) NumDefines() int { return len(p.defs) }

// NumChecks returns the number of range checks.
func (p *Program) NumChecks() int { return len(p.checks) }

// Pattern returns a copy of the structure of dF/dx (Val nil), rows sorted by
// column. An entry is present when the unknown appears in the equation after
// constant folding; its value may still be zero at some points.
func (p *Program) Pattern() *Sparse { return p.pattern.clone(false) }

// NewJacobian returns a matrix with the structure of dF/dx and Val allocated,
// the destination for Eval.Jacobian.
func (p *Program) NewJacobian() *Sparse { return p.pattern.clone(true) }

// NewEval returns a new evaluator with its own work buffers.
func (p *Program) NewEval() *Eval {
	w := make([]float64, p.size)
	copy(w[p.nx+p.np:], p.consts)
	d := make([]float64, p.dsize)
	d[dOne] = 1
	return &Eval{
		prog: p,
		nx:   p.nx,
		np:   p.np,
		w:    w,
		d:    d,
		vals: make([]float64, p.maxOps),
		adj:  make([]float64, p.maxOps),
		padj: make([]float64, p.np),
		xw:   make([]float64, p.nx),
		pw:   make([]float64, p.np),
		f1:   make([]float64, len(p.eqs)),
		f2:   make([]float64, len(p.eqs)),
	}
}

// ref is a compiled subexpression: a slot of the tape, or a constant not yet
// placed on the tape (so constant subtrees fold without leaving dead ops).
type ref struct {
	slot    int32
	isConst bool
	c       float64
}

type compiler struct {
	prog   *Program
	t      *tape // the tape being built, reused as scratch between tapes
	memo   map[model.Node]ref
	vars   map[int]int32
	params map[int]int32
	consts map[uint64]int32
}

// compile compiles one formula into a tape, reusing the compiler's maps.
func (c *compiler) compile(kind, name string, pos model.Pos, n model.Node) (*tape, error) {
	if n == nil {
		return nil, fmt.Errorf("%s: jacobian: %s %q has no formula", pos, kind, name)
	}
	if c.t == nil {
		c.t = &tape{}
	}
	c.t.name, c.t.kind = name, kind
	c.t.ops, c.t.at, c.t.what = c.t.ops[:0], c.t.at[:0], c.t.what[:0]
	clear(c.memo)
	clear(c.vars)
	clear(c.params)
	clear(c.consts)
	r, err := c.node(n)
	if err != nil {
		return nil, err
	}
	root := c.slot(r, n.At())
	t := &tape{
		name: name,
		kind: kind,
		ops:  slices.Clone(c.t.ops),
		at:   slices.Clone(c.t.at),
		what: slices.Clone(c.t.what),
		root: root,
	}
	for idx, slot := range c.vars {
		t.vars = append(t.vars, varRef{slot: slot, index: int32(idx)})
	}
	for idx, slot := range c.params {
		t.params = append(t.params, varRef{slot: slot, index: int32(idx)})
	}
	sort.Slice(t.vars, func(i, j int) bool { return t.vars[i].index < t.vars[j].index })
	sort.Slice(t.params, func(i, j int) bool { return t.params[i].index < t.params[j].index })
	return t, nil
}

func (c *compiler) emit(o op, at model.Pos, what string) int32 {
	c.t.ops = append(c.t.ops, o)
	c.t.at = append(c.t.at, at)
	c.t.what = append(c.t.what, what)
	return int32(len(c.t.ops) - 1)
}

// slot places r on the tape (a constant gets a load, shared by value).
func (c *compiler) slot(r ref, at model.Pos) int32 {
	if !r.isConst {
		return r.slot
	}
	bits := math.Float64bits(r.c)
	if s, ok := c.consts[bits]; ok {
		return s
	}
	s := c.emit(op{code: opConst, c: r.c}, at, "constant")
	c.consts[bits] = s
	return s
}

func (c *compiler) node(n model.Node) (ref, error) {
	if r, ok := c.memo[n]; ok {
		return r, nil
	}
	r, err := c.build(n)
	if err != nil {
		return ref{}, err
	}
	c.memo[n] = r
	return r, nil
}

func (c *compiler) build(n model.Node) (ref, error) {
	switch n := n.(type) {
	case *model.Const:
		if !finite(n.Value) {
			return ref{}, c.errAt(n.Pos, "constant", fmt.Sprintf("constant is not finite (%g)", n.Value))
		}
		return ref{isConst: true, c: n.Value}, nil
	case *model.Var:
		return c.load(n.Index, n.Pos, c.vars, opVar, c.prog.xNames, "unknown")
	case *model.Param:
		return c.load(n.Index, n.Pos, c.params, opParam, c.prog.pNames, "parameter")
	case *model.Neg:
		x, err := c.node(n.X)
		if err != nil {
			return ref{}, err
		}
		return c.apply(opNeg, n.Pos, "-", 0, x)
	case *model.Binary:
		l, err := c.node(n.L)
		if err != nil {
			return ref{}, err
		}
		r, err := c.node(n.R)
		if err != nil {
			return ref{}, err
		}
		switch n.Op {
		case model.OpAdd:
			return c.apply(opAdd, n.Pos, "+", 0, l, r)
		case model.OpSub:
			return c.apply(opSub, n.Pos, "-", 0, l, r)
		case model.OpMul:
			return c.apply(opMul, n.Pos, "*", 0, l, r)
		case model.OpDiv:
			return c.apply(opDiv, n.Pos, "/", 0, l, r)
		case model.OpPow:
			return c.pow(n.Pos, "^", l, r)
		}
		return ref{}, fmt.Errorf("%s: jacobian: unknown operator %q", n.Pos, string(n.Op))
	case *model.Call:
		args := make([]ref, len(n.Args))
		for i, a := range n.Args {
			r, err := c.node(a)
			if err != nil {
				return ref{}, err
			}
			args[i] = r
		}
		return c.call(n, args)
	}
	panic(fmt.Sprintf("jacobian: undefined node type %T", n))
}

func (c *compiler) load(idx int, at model.Pos, seen map[int]int32, code opcode, names []string, what string) (ref, error) {
	if idx < 0 || idx >= len(names) {
		return ref{}, fmt.Errorf("%s: jacobian: %s index %d out of range [0, %d) in %s %q", at, what, idx, len(names), c.t.kind, c.t.name)
	}
	if s, ok := seen[idx]; ok {
		return ref{slot: s}, nil
	}
	s := c.emit(op{code: code, a: int32(idx)}, at, names[idx])
	seen[idx] = s
	return ref{slot: s}, nil
}

func (c *compiler) call(n *model.Call, args []ref) (ref, error) {
	want := 1
	switch n.Fn {
	case model.FnMin, model.FnMax:
		want = 2
	case model.FnPow:
		want = 2
	}
	if len(args) < want || (n.Fn != model.FnMin && n.Fn != model.FnMax && len(args) != want) {
		return ref{}, fmt.Errorf("%s: jacobian: %s takes %d argument(s), got %d", n.Pos, n.Fn, want, len(args))
	}
	what := string(n.Fn)
	switch n.Fn {
	case model.FnExp:
		return c.apply(opExp, n.Pos, what, 0, args[0])
	case model.FnLog:
		return c.apply(opLog, n.Pos, what, 0, args[0])
	case model.FnLog10:
		return c.apply(opLog10, n.Pos, what, 0, args[0])
	case model.FnSqrt:
		return c.apply(opSqrt, n.Pos, what, 0, args[0])
	case model.FnAbs:
		return c.apply(opAbs, n.Pos, what, 0, args[0])
	case model.FnPow:
		return c.pow(n.Pos, what, args[0], args[1])
	case model.FnMin, model.FnMax:
		code := opMin
		if n.Fn == model.FnMax {
			code = opMax
		}
		acc := args[0]
		for _, a := range args[1:] {
			var err error
			if acc, err = c.apply(code, n.Pos, what, 0, acc, a); err != nil {
				return ref{}, err
			}
		}
		return acc, nil
	}
	return ref{}, fmt.Errorf("%s: jacobian: unknown function %q", n.Pos, n.Fn)
}

// pow compiles base^exponent: a square, a constant power, or the general
// form when the exponent varies.
func (c *compiler) pow(at model.Pos, what string, base, exp ref) (ref, error) {
	if !exp.isConst {
		return c.apply(opPow, at, what, 0, base, exp)
	}
	switch exp.c {
	case 1:
		return base, nil
	case 2:
		return c.apply(opSq, at, what, 0, base)
	}
	return c.apply(opPowC, at, what, exp.c, base)
}

// apply emits an operation, folds it when every operand is a constant, or
// drops it when it is an identity.
func (c *compiler) apply(code opcode, at model.Pos, what string, k float64, args ...ref) (ref, error) {
	folded := true
	for _, a := range args {
		folded = folded && a.isConst
	}
	if folded {
		return c.fold(code, at, what, k, args)
	}
	if r, ok := identity(code, args); ok {
		return r, nil
	}
	if code == opDiv && args[1].isConst && args[1].c == 0 {
		return ref{}, c.errAt(at, what, "division by zero")
	}
	o := op{code: code, c: k}
	o.a = c.slot(args[0], at)
	if len(args) > 1 {
		o.b = c.slot(args[1], at)
	}
	return ref{slot: c.emit(o, at, what)}, nil
}

// identity simplifies x+0, 0+x, x-0, x*1, 1*x and x/1 to x: exact in
// floating point (up to the sign of a zero), and common in expanded models
// ("(i == NF ? F*zF : 0)").
func identity(code opcode, args []ref) (ref, bool) {
	if len(args) != 2 {
		return ref{}, false
	}
	a, b := args[0], args[1]
	is := func(r ref, v float64) bool { return r.isConst && r.c == v }
	switch code {
	case opAdd:
		if is(b, 0) {
			return a, true
		}
		if is(a, 0) {
			return b, true
		}
	case opSub:
		if is(b, 0) {
			return a, true
		}
	case opMul:
		if is(b, 1) {
			return a, true
		}
		if is(a, 1) {
			return b, true
		}
	case opDiv:
		if is(b, 1) {
			return a, true
		}
	}
	return ref{}, false
}

// fold evaluates an operation on constants with the same code that evaluates
// tapes, so folding and evaluation cannot disagree.
func (c *compiler) fold(code opcode, at model.Pos, what string, k float64, args []ref) (ref, error) {
	mini := &tape{name: c.t.name, kind: c.t.kind}
	var pool constPool
	for _, a := range args {
		mini.ops = append(mini.ops, op{code: opConst, c: a.c})
		mini.at = append(mini.at, at)
		mini.what = append(mini.what, "constant")
	}
	mini.ops = append(mini.ops, op{code: code, a: 0, b: 1, c: k})
	mini.at = append(mini.at, at)
	mini.what = append(mini.what, what)
	mini.root = int32(len(mini.ops) - 1)
	pool.collect(mini)
	l := newLowering(0, 0, &pool)
	l.tape(mini)
	f := l.schedule()
	w := make([]float64, int(l.base)+len(f.code))
	copy(w, pool.vals)
	forward(f, w, int(l.base))
	if r := w[mini.out]; !finite(r) {
		return ref{}, mini.valueFault(gather(make([]float64, len(mini.ops)), w, mini.slot, len(mini.ops)))
	}
	return ref{isConst: true, c: w[mini.out]}, nil
}

func (c *compiler) errAt(at model.Pos, what, msg string) *EvalError {
	return &EvalError{Pos: at, Equation: c.t.name, Kind: c.t.kind, Op: what, Msg: msg}
}
