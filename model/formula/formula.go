// Package formula parses the formulas of a loopwright model file (equations
// "lhs = rhs", expressions, for-clauses "i in 2..NT-1, j in comp" and set
// ranges "1..NT") and translates them at once from expr-lang's syntax tree
// into a small closed tree of its own, one struct per construct.
//
// Positions are rune offsets into the formula text as given; the caller maps
// them to file lines and columns. Everything that is not arithmetic on
// numbers, names and index access, a conditional on a comparison, or one of
// the functions exp log log10 sqrt abs min max pow is rejected at its
// position with a message saying what is allowed.
//
// Extensions over expr's own syntax:
//   - index access with several indices, x[i,j], the primary form for
//     families over two or more sets; x[i][j] means the same;
//   - sum(i in SET_OR_RANGE, expr): a summation of expr over the index i,
//     running over a set name or a range lo..hi.
package formula

import (
	"errors"
	"fmt"
	"math"
	"strings"

	"github.com/expr-lang/expr/ast"
	"github.com/expr-lang/expr/conf"
	"github.com/expr-lang/expr/file"
	"github.com/expr-lang/expr/parser"
	"github.com/expr-lang/expr/parser/lexer"
)

// Limits that keep a hostile formula from costing much.
const (
	MaxLen   = 20000 // runes in one formula
	MaxDepth = 200   // nesting depth of the translated tree
)

// Functions lists the callable functions with their argument counts
// (-2 means two or more).
var Functions = map[string]int{
	"exp": 1, "log": 1, "log10": 1, "sqrt": 1, "abs": 1,
	"min": -2, "max": -2, "pow": 2,
	"sum": 2, // the summation extension, handled apart
}

const allowedFuncs = "exp, log, log10, sqrt, abs, min, max, pow and sum(i in SET, expr)"

// Expr is a node of the formula tree. The node types are the ones in this
// file; every pass is one type switch.
type Expr interface {
	Offset() int // rune offset of the node in the formula
}

// Num is a number literal, "2" or "1.5e-3".
type Num struct {
	Off   int
	Value float64
	Int   bool // written without a fraction or exponent
}

// Ident is a name: a constant, a parameter, an unknown, a define or an index.
type Ident struct {
	Off  int
	Name string
}

// Index is index access on a family: x[i+1], x[i,j].
type Index struct {
	Off  int // the family name
	Name string
	Args []Expr
}

// Unary is "-" X or "not" X ("!" is read as "not"). A unary plus is dropped.
type Unary struct {
	Off int
	Op  string
	X   Expr
}

// Binary is arithmetic: L Op R with Op one of + - * / ^ %. "**" reads as "^".
type Binary struct {
	Off  int // the operator
	Op   string
	L, R Expr
}

// Compare is L Op R with Op one of == != < > <= >=.
type Compare struct {
	Off  int
	Op   string
	L, R Expr
}

// Logical is L and R, L or R ("&&", "||" read the same).
type Logical struct {
	Off  int
	Op   string // "and" or "or"
	L, R Expr
}

// Cond is C ? A : B.
type Cond struct {
	Off     int // the condition's position
	C, A, B Expr
}

// Call is Fn(Args...), Fn one of Functions other than sum.
type Call struct {
	Off  int
	Fn   string
	Args []Expr
}

// Sum is sum(Var in Range, Body).
type Sum struct {
	Off  int
	Loop Loop
	Body Expr
}

// Loop is one clause "i in stage" or "i in 2..NT-1".
type Loop struct {
	Off   int // the index variable
	Var   string
	Range Range
}

// Range is a set name or an integer range Lo..Hi.
type Range struct {
	Off    int
	Set    string // the set's name, or "" for Lo..Hi
	Lo, Hi Expr
}

func (n *Num) Offset() int     { return n.Off }
func (n *Ident) Offset() int   { return n.Off }
func (n *Index) Offset() int   { return n.Off }
func (n *Unary) Offset() int   { return n.Off }
func (n *Binary) Offset() int  { return n.Off }
func (n *Compare) Offset() int { return n.Off }
func (n *Logical) Offset() int { return n.Off }
func (n *Cond) Offset() int    { return n.Off }
func (n *Call) Offset() int    { return n.Off }
func (n *Sum) Offset() int     { return n.Off }

// Error is a formula error at a rune offset of the formula.
type Error struct {
	Off int
	Msg string
}

func (e *Error) Error() string { return fmt.Sprintf("%d: %s", e.Off, e.Msg) }

func errAt(off int, format string, args ...any) *Error {
	return &Error{Off: off, Msg: fmt.Sprintf(format, args...)}
}

// ParseExpr parses one expression.
func ParseExpr(src string) (Expr, error) {
	if err := checkLen(src); err != nil {
		return nil, err
	}
	return parseAt(src, 0)
}

// ParseEquation parses "lhs = rhs", split at the one lone "=". eq is the
// offset of the "=".
func ParseEquation(src string) (lhs, rhs Expr, eq int, err error) {
	if err := checkLen(src); err != nil {
		return nil, nil, 0, err
	}
	toks, lerr := lex(src)
	if lerr != nil {
		return nil, nil, 0, lerr
	}
	eq = -1
	for _, t := range toks {
		if t.Kind == lexer.Operator && t.Value == "=" {
			if eq >= 0 {
				return nil, nil, 0, errAt(t.From, `an equation has exactly one "=": found a second one here (use "==" for a comparison)`)
			}
			eq = t.From
		}
	}
	if eq < 0 {
		for _, t := range toks {
			if t.Kind == lexer.Operator && t.Value == "==" {
				return nil, nil, 0, errAt(t.From, `an equation needs one "=" between its two sides; "==" is a comparison`)
			}
		}
		return nil, nil, 0, errAt(0, `an equation needs the form "lhs = rhs": no "=" found`)
	}
	rs := []rune(src)
	l, r := string(rs[:eq]), string(rs[eq+1:])
	if strings.TrimSpace(l) == "" {
		return nil, nil, 0, errAt(eq, `the left side of "=" is empty`)
	}
	if strings.TrimSpace(r) == "" {
		return nil, nil, 0, errAt(eq, `the right side of "=" is empty`)
	}
	if lhs, err = parseAt(l, 0); err != nil {
		return nil, nil, 0, err
	}
	if rhs, err = parseAt(r, eq+1); err != nil {
		return nil, nil, 0, err
	}
	return lhs, rhs, eq, nil
}

// ParseFor parses the loops of a for clause: "i in 2..NT-1" or several
// separated by commas, "i in stage, j in comp".
func ParseFor(src string) ([]Loop, error) {
	if err := checkLen(src); err != nil {
		return nil, err
	}
	toks, err := lex(src)
	if err != nil {
		return nil, err
	}
	rs := []rune(src)
	var loops []Loop
	start, depth := 0, 0
	cut := func(end int) error {
		part := string(rs[start:end])
		if strings.TrimSpace(part) == "" {
			return errAt(start, `empty loop in for clause: write "i in SET" or "i in LO..HI", several separated by ","`)
		}
		tr, n, err := parseTree(part, start)
		if err != nil {
			return err
		}
		in, ok := n.(*ast.BinaryNode)
		if !ok || in.Operator != "in" {
			return errAt(tr.at(n), `a loop reads "i in SET" or "i in LO..HI", several separated by ","`)
		}
		l, err := tr.loop(in)
		if err != nil {
			return err
		}
		for _, o := range loops {
			if o.Var == l.Var {
				return errAt(l.Off, "index %q appears twice in the for clause", l.Var)
			}
		}
		loops = append(loops, l)
		return nil
	}
	for _, t := range toks {
		switch {
		case t.Kind == lexer.Bracket && (t.Value == "(" || t.Value == "["):
			depth++
		case t.Kind == lexer.Bracket && (t.Value == ")" || t.Value == "]"):
			depth--
		case t.Kind == lexer.Operator && t.Value == "," && depth == 0:
			if err := cut(t.From); err != nil {
				return nil, err
			}
			start = t.To
		case t.Kind == lexer.EOF:
			if err := cut(len(rs)); err != nil {
				return nil, err
			}
		}
	}
	return loops, nil
}

// ParseRange parses a set's range "1..NT" (or the name of another set).
func ParseRange(src string) (Range, error) {
	if err := checkLen(src); err != nil {
		return Range{}, err
	}
	tr, n, err := parseTree(src, 0)
	if err != nil {
		return Range{}, err
	}
	return tr.rng(n)
}

func checkLen(src string) error {
	if n := len([]rune(src)); n > MaxLen {
		return errAt(0, "formula is %d characters long; the limit is %d", n, MaxLen)
	}
	return nil
}

func lex(src string) (toks []lexer.Token, err error) {
	defer func() {
		if r := recover(); r != nil {
			toks, err = nil, errAt(0, "cannot read formula: %v", r)
		}
	}()
	toks, err = lexer.Lex(file.NewSource(src))
	if err != nil {
		return nil, exprErr(err, nil, 0)
	}
	return toks, nil
}

// parseAt parses an expression and translates it.
func parseAt(src string, base int) (Expr, error) {
	e, err := parseRaw(src, base)
	if err != nil {
		return nil, err
	}
	return e, nil
}

type translator struct {
	off   []int // rune offset in the rewritten source -> offset in the formula
	base  int
	depth int
}

func (t *translator) at(n ast.Node) int { return t.pos(n.Location().From) }

func (t *translator) pos(from int) int {
	if from < 0 {
		from = 0
	}
	if from >= len(t.off) {
		from = len(t.off) - 1
	}
	return t.off[from] + t.base
}

// parseRaw rewrites x[i,j] to x[i][j], parses with expr's parser, and
// translates the tree.
func parseRaw(src string, base int) (Expr, error) {
	tr, n, err := parseTree(src, base)
	if err != nil {
		return nil, err
	}
	return tr.expr(n)
}

func parseTree(src string, base int) (tr *translator, n ast.Node, err error) {
	toks, err := lex(src)
	if err != nil {
		return nil, nil, shift(err, base)
	}
	text, off := rewriteIndexCommas(src, toks)
	tr = &translator{off: off, base: base}
	cfg := conf.CreateNew()
	for _, name := range []string{"abs", "min", "max", "sum"} {
		cfg.Disabled[name] = true
	}
	var tree *parser.Tree
	func() {
		defer func() {
			if r := recover(); r != nil {
				err = errAt(base, "cannot parse formula: %v", r)
			}
		}()
		tree, err = parser.ParseWithConfig(text, cfg)
	}()
	if err != nil {
		var fe *file.Error
		if errors.As(err, &fe) {
			return nil, nil, exprErr(fe, tr, base)
		}
		var e *Error
		if errors.As(err, &e) {
			return nil, nil, e
		}
		return nil, nil, errAt(base, "%v", err)
	}
	return tr, tree.Node, nil
}

func shift(err error, base int) error {
	var e *Error
	if errors.As(err, &e) {
		return &Error{Off: e.Off + base, Msg: e.Msg}
	}
	return err
}

func exprErr(err error, tr *translator, base int) error {
	var fe *file.Error
	if !errors.As(err, &fe) {
		return errAt(base, "%v", err)
	}
	msg := fe.Message
	msg = strings.TrimPrefix(msg, "compilation failed: ")
	if strings.Contains(msg, "maximum allowed nodes") {
		msg = "formula is too large or nested too deeply"
	}
	off := fe.From
	if tr != nil {
		return errAt(tr.pos(off), "%s", msg)
	}
	return errAt(off+base, "%s", msg)
}

// rewriteIndexCommas turns the commas at the top level of an index bracket
// into "][" and returns the new text with a map from its rune offsets to the
// original ones.
func rewriteIndexCommas(src string, toks []lexer.Token) (string, []int) {
	rs := []rune(src)
	replace := map[int]bool{}
	type open struct{ index bool }
	var stack []open
	for k, t := range toks {
		if t.Kind != lexer.Bracket && !(t.Kind == lexer.Operator && t.Value == ",") {
			continue
		}
		switch t.Value {
		case "[":
			idx := false
			if k > 0 {
				p := toks[k-1]
				idx = p.Kind == lexer.Identifier || (p.Kind == lexer.Bracket && (p.Value == "]" || p.Value == ")"))
			}
			stack = append(stack, open{idx})
		case "(", "{":
			stack = append(stack, open{false})
		case "]", ")", "}":
			if len(stack) > 0 {
				stack = stack[:len(stack)-1]
			}
		case ",":
			if len(stack) > 0 && stack[len(stack)-1].index {
				replace[t.From] = true
			}
		}
	}
	if len(replace) == 0 {
		off := make([]int, len(rs)+1)
		for i := range off {
			off[i] = i
		}
		return src, off
	}
	var b strings.Builder
	off := make([]int, 0, len(rs)+len(replace)+1)
	for i, r := range rs {
		if replace[i] {
			b.WriteString("][")
			off = append(off, i, i)
			continue
		}
		b.WriteRune(r)
		off = append(off, i)
	}
	off = append(off, len(rs))
	return b.String(), off
}

func (t *translator) expr(n ast.Node) (Expr, error) {
	t.depth++
	defer func() { t.depth-- }()
	if t.depth > MaxDepth {
		return nil, errAt(t.at(n), "formula is nested too deeply (more than %d levels)", MaxDepth)
	}
	switch n := n.(type) {
	case *ast.IntegerNode:
		return &Num{Off: t.at(n), Value: float64(n.Value), Int: true}, nil
	case *ast.FloatNode:
		if math.IsInf(n.Value, 0) || math.IsNaN(n.Value) {
			return nil, errAt(t.at(n), "number out of range")
		}
		return &Num{Off: t.at(n), Value: n.Value}, nil
	case *ast.IdentifierNode:
		if _, ok := Functions[n.Value]; ok && n.Value != "sum" {
			return nil, errAt(t.at(n), "%s is a function: call it as %s(...)", n.Value, n.Value)
		}
		return &Ident{Off: t.at(n), Name: n.Value}, nil
	case *ast.UnaryNode:
		x, err := t.expr(n.Node)
		if err != nil {
			return nil, err
		}
		switch n.Operator {
		case "+":
			return x, nil
		case "-":
			return &Unary{Off: t.at(n), Op: "-", X: x}, nil
		case "!", "not":
			return &Unary{Off: t.at(n), Op: "not", X: x}, nil
		}
		return nil, errAt(t.at(n), "operator %q is not allowed; use + - * / ^ ** and comparisons", n.Operator)
	case *ast.BinaryNode:
		return t.binary(n)
	case *ast.ConditionalNode:
		c, err := t.expr(n.Cond)
		if err != nil {
			return nil, err
		}
		a, err := t.expr(n.Exp1)
		if err != nil {
			return nil, err
		}
		b, err := t.expr(n.Exp2)
		if err != nil {
			return nil, err
		}
		// expr locates a conditional at its else branch; the condition's
		// own position is the more useful one.
		return &Cond{Off: c.Offset(), C: c, A: a, B: b}, nil
	case *ast.MemberNode:
		return t.member(n)
	case *ast.CallNode:
		id, ok := n.Callee.(*ast.IdentifierNode)
		if !ok {
			return nil, errAt(t.at(n), "only the functions %s can be called", allowedFuncs)
		}
		return t.call(t.at(n.Callee), id.Value, n.Arguments)
	case *ast.BuiltinNode:
		return t.call(t.at(n), n.Name, n.Arguments)
	case *ast.StringNode:
		return nil, errAt(t.at(n), "a string literal is not allowed in a formula; use numbers and names")
	case *ast.BoolNode:
		return nil, errAt(t.at(n), "true/false are not allowed; write a comparison such as i == 1")
	case *ast.NilNode:
		return nil, errAt(t.at(n), "nil is not allowed in a formula")
	case *ast.ArrayNode:
		return nil, errAt(t.at(n), "an array is not allowed in a formula; use index access x[i] on a family")
	case *ast.MapNode, *ast.PairNode:
		return nil, errAt(t.at(n), "a map is not allowed in a formula")
	case *ast.PredicateNode, *ast.PointerNode:
		return nil, errAt(t.at(n), "predicates and # are not allowed in a formula")
	case *ast.VariableDeclaratorNode:
		return nil, errAt(t.at(n), `"let" is not allowed in a formula; use a define entry`)
	case *ast.SequenceNode:
		return nil, errAt(t.at(n), `";" is not allowed: a formula is one expression`)
	case *ast.SliceNode:
		return nil, errAt(t.at(n), "slices x[a:b] are not allowed; use sum(i in a..b, x[i])")
	case *ast.ChainNode:
		return nil, errAt(t.at(n), `"?." is not allowed in a formula`)
	}
	return nil, errAt(t.at(n), "this construct is not allowed in a formula; use numbers, names, x[i], + - * / ^, cond ? a : b and the functions %s", allowedFuncs)
}

func (t *translator) binary(n *ast.BinaryNode) (Expr, error) {
	op := n.Operator
	switch op {
	case "+", "-", "*", "/", "^", "**", "%", "==", "!=", "<", ">", "<=", ">=", "and", "or", "&&", "||":
	case "in":
		return nil, errAt(t.at(n), `"in" is only allowed in a for clause or in sum(i in SET, expr)`)
	case "..":
		return nil, errAt(t.at(n), `a range "a..b" is only allowed in a for clause, a set or a sum`)
	default:
		return nil, errAt(t.at(n), "operator %q is not allowed; use + - * / ^ ** %%, comparisons, and, or, not", op)
	}
	l, err := t.expr(n.Left)
	if err != nil {
		return nil, err
	}
	r, err := t.expr(n.Right)
	if err != nil {
		return nil, err
	}
	off := t.at(n)
	switch op {
	case "**":
		return &Binary{Off: off, Op: "^", L: l, R: r}, nil
	case "==", "!=", "<", ">", "<=", ">=":
		return &Compare{Off: off, Op: op, L: l, R: r}, nil
	case "and", "&&":
		return &Logical{Off: off, Op: "and", L: l, R: r}, nil
	case "or", "||":
		return &Logical{Off: off, Op: "or", L: l, R: r}, nil
	}
	return &Binary{Off: off, Op: op, L: l, R: r}, nil
}

func (t *translator) member(n *ast.MemberNode) (Expr, error) {
	if n.Optional || n.Method {
		return nil, errAt(t.at(n), "member access is not allowed in a formula")
	}
	if _, ok := n.Property.(*ast.StringNode); ok {
		return nil, errAt(t.at(n), `member access "a.b" is not allowed in a formula; names are plain (letters, digits, _) and families use x[i]`)
	}
	// x[i][j] nests: collect the indices from the inside out.
	var args []ast.Node
	var cur ast.Node = n
	for {
		m, ok := cur.(*ast.MemberNode)
		if !ok {
			break
		}
		if _, ok := m.Property.(*ast.StringNode); ok || m.Optional || m.Method {
			return nil, errAt(t.at(m), `member access "a.b" is not allowed in a formula`)
		}
		args = append([]ast.Node{m.Property}, args...)
		cur = m.Node
	}
	id, ok := cur.(*ast.IdentifierNode)
	if !ok {
		return nil, errAt(t.at(cur), "index access needs a family name before [ ], as in x[i]")
	}
	out := &Index{Off: t.at(id), Name: id.Value}
	for _, a := range args {
		e, err := t.expr(a)
		if err != nil {
			return nil, err
		}
		out.Args = append(out.Args, e)
	}
	return out, nil
}

func (t *translator) call(off int, name string, args []ast.Node) (Expr, error) {
	want, ok := Functions[name]
	if !ok {
		return nil, errAt(off, "function %q is not allowed; the callable functions are %s", name, allowedFuncs)
	}
	if name == "sum" {
		return t.sum(off, args)
	}
	switch {
	case want == -2 && len(args) < 2:
		return nil, errAt(off, "%s takes two or more arguments, got %d", name, len(args))
	case want > 0 && len(args) != want:
		s := "s"
		if want == 1 {
			s = ""
		}
		return nil, errAt(off, "%s takes %d argument%s, got %d", name, want, s, len(args))
	}
	c := &Call{Off: off, Fn: name}
	for _, a := range args {
		e, err := t.expr(a)
		if err != nil {
			return nil, err
		}
		c.Args = append(c.Args, e)
	}
	return c, nil
}

func (t *translator) sum(off int, args []ast.Node) (Expr, error) {
	if len(args) != 2 {
		return nil, errAt(off, "sum takes two arguments: sum(i in SET_OR_RANGE, expr), got %d", len(args))
	}
	in, ok := args[0].(*ast.BinaryNode)
	if !ok || in.Operator != "in" {
		return nil, errAt(off, "sum needs an index first: sum(i in SET_OR_RANGE, expr)")
	}
	loop, err := t.loop(in)
	if err != nil {
		return nil, err
	}
	body := args[1]
	if p, ok := body.(*ast.PredicateNode); ok {
		body = p.Node
	}
	b, err := t.expr(body)
	if err != nil {
		return nil, err
	}
	return &Sum{Off: off, Loop: loop, Body: b}, nil
}

func (t *translator) loop(in *ast.BinaryNode) (Loop, error) {
	id, ok := in.Left.(*ast.IdentifierNode)
	if !ok {
		return Loop{}, errAt(t.at(in.Left), `the index before "in" must be a plain name, as in "i in stage"`)
	}
	r, err := t.rng(in.Right)
	if err != nil {
		return Loop{}, err
	}
	return Loop{Off: t.at(id), Var: id.Value, Range: r}, nil
}

func (t *translator) rng(n ast.Node) (Range, error) {
	if id, ok := n.(*ast.IdentifierNode); ok {
		return Range{Off: t.at(id), Set: id.Value}, nil
	}
	b, ok := n.(*ast.BinaryNode)
	if !ok || b.Operator != ".." {
		return Range{}, errAt(t.at(n), `a range is a set name or "LO..HI", as in "stage" or "2..NT-1"`)
	}
	lo, err := t.expr(b.Left)
	if err != nil {
		return Range{}, err
	}
	hi, err := t.expr(b.Right)
	if err != nil {
		return Range{}, err
	}
	return Range{Off: t.at(b), Lo: lo, Hi: hi}, nil
}
