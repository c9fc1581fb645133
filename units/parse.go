package units

import (
	"fmt"
	"math"
	"sort"
	"strconv"
	"strings"
	"unicode"
	"unicode/utf8"
)

// Hard limits that keep every input cheap and every number finite.
const (
	// MaxInput is the longest unit or quantity string accepted, in runes.
	MaxInput = 256
	// maxLitExp bounds the numerator and denominator of a written exponent.
	maxLitExp = 99
	// maxExpDecimals bounds the digits after the point of a decimal exponent.
	maxExpDecimals = 4
	// maxDimExp bounds the numerator and denominator of every exponent of a
	// resulting dimension.
	maxDimExp = 10000
)

type tokKind int

const (
	tEOF tokKind = iota
	tIdent
	tNum
	tMul
	tDiv
	tPow
	tLParen
	tRParen
	tSign
	tSup
)

type token struct {
	kind tokKind
	text string // as written
	col  int    // 1-based rune column in the whole input
	sup  Rat    // the exponent of a run of superscripts
}

// parser reads one unit expression. Columns are reported against input,
// the whole string the caller gave (a quantity string for ParseQuantity).
type parser struct {
	input string
	toks  []token
	pos   int
}

// Parse parses a unit string such as "kg/h", "kJ/(kg*K)", "m^3/h", "Pa^0.5",
// "1/s", "%" or "degC". The empty string and "1" are dimensionless. An error
// is an *Error whose Col points at the problem.
//
// Grammar: products are written with "*", "." or "·" (or a space), quotients
// with "/", powers with "^" or "**" followed by an integer, a decimal or a
// parenthesised fraction ("m^-1", "m^1.5", "m^(1/2)"), or with superscripts
// ("m³"). Operators of equal rank apply left to right, so "kJ/kg*K" means
// (kJ/kg)*K; write "kJ/(kg*K)" for a heat capacity. A symbol that is known
// exactly wins over a prefix reading ("min" is a minute, "mmHg" a millimetre
// of mercury); otherwise an SI prefix may stand before a unit that takes one
// ("kmol", "ms", "MPa").
//
// An affine unit (degC, degF, barg, psig, kPag, MPag) used alone gives a Unit
// with an Offset for absolute values. Inside a compound ("kJ/(kg*degC)",
// "degF/min", "barg/h") it stands for its difference: scale only, no offset.
func Parse(s string) (Unit, error) {
	return parseUnit(s, s, 0)
}

// MustParse is Parse for unit literals in code and tests: it panics on error.
func MustParse(s string) Unit {
	u, err := Parse(s)
	if err != nil {
		panic(err)
	}
	return u
}

// parseUnit parses the unit text unit, which sits at rune offset off inside
// input (the string reported in errors).
func parseUnit(input, unit string, off int) (Unit, error) {
	if n := utf8.RuneCountInString(input); n > MaxInput {
		return Unit{}, &Error{Input: clip(input), Col: MaxInput + 1,
			Msg: fmt.Sprintf("too long (%d characters; the limit is %d)", n, MaxInput)}
	}
	p := &parser{input: input}
	if err := p.lex([]rune(unit), off); err != nil {
		return Unit{}, err
	}
	if len(p.toks) == 1 { // only EOF: "" or blanks
		return Unit{Scale: 1}, nil
	}
	v, err := p.expr()
	if err != nil {
		return Unit{}, err
	}
	if t := p.peek(); t.kind != tEOF {
		if t.kind == tRParen {
			return Unit{}, p.errAt(t, `unexpected ")" with no matching "("`)
		}
		return Unit{}, p.errAt(t, fmt.Sprintf("unexpected %q", t.text))
	}
	u := Unit{Text: v.text, Dim: v.dim, Scale: v.scale}
	if v.leaf != nil {
		u.Offset = v.leaf.offset
	}
	if u.Text == "1" {
		u.Text = ""
	}
	return u, nil
}

func clip(s string) string {
	r := []rune(s)
	if len(r) <= MaxInput {
		return s
	}
	return string(r[:MaxInput]) + "…"
}

func (p *parser) errAt(t token, msg string) *Error {
	return &Error{Input: p.input, Col: t.col, Msg: msg}
}

// ---- lexer ----

func isDigit(r rune) bool { return '0' <= r && r <= '9' }

func isIdentStart(r rune) bool {
	return unicode.IsLetter(r) || r == '_' || r == '°' || r == '℃' || r == '℉'
}

func isIdentPart(r rune) bool {
	return unicode.IsLetter(r) || isDigit(r) || r == '_'
}

// superDigit returns the value of a superscript digit, or -1.
func superDigit(r rune) int {
	switch r {
	case '⁰':
		return 0
	case '¹':
		return 1
	case '²':
		return 2
	case '³':
		return 3
	}
	if '⁴' <= r && r <= '⁹' {
		return int(r-'⁴') + 4
	}
	return -1
}

func (p *parser) lex(rs []rune, off int) *Error {
	operandEnd := func() bool {
		if len(p.toks) == 0 {
			return false
		}
		switch p.toks[len(p.toks)-1].kind {
		case tIdent, tNum, tRParen, tSup:
			return true
		}
		return false
	}
	add := func(k tokKind, start, end int) {
		p.toks = append(p.toks, token{kind: k, text: string(rs[start:end]), col: off + start + 1})
	}
	i, n := 0, len(rs)
	for i < n {
		r := rs[i]
		switch {
		case unicode.IsSpace(r):
			i++
		case r == '*' && i+1 < n && rs[i+1] == '*':
			add(tPow, i, i+2)
			i += 2
		case r == '*' || r == '·' || r == '⋅':
			add(tMul, i, i+1)
			i++
		case r == '.' && !(i+1 < n && isDigit(rs[i+1]) && !operandEnd()):
			add(tMul, i, i+1)
			i++
		case r == '/':
			add(tDiv, i, i+1)
			i++
		case r == '^':
			add(tPow, i, i+1)
			i++
		case r == '(':
			add(tLParen, i, i+1)
			i++
		case r == ')':
			add(tRParen, i, i+1)
			i++
		case r == '-' || r == '+':
			add(tSign, i, i+1)
			i++
		case isDigit(r) || r == '.':
			j := scanNumber(rs, i)
			add(tNum, i, j)
			i = j
		case r == '%':
			add(tIdent, i, i+1)
			i++
		case superDigit(r) >= 0 || r == '⁻' || r == '⁺':
			j, neg, v := i, false, 0
			if rs[j] == '⁻' || rs[j] == '⁺' {
				neg = rs[j] == '⁻'
				j++
			}
			k := j
			for j < n && superDigit(rs[j]) >= 0 {
				if v = v*10 + superDigit(rs[j]); v > maxLitExp {
					return &Error{Input: p.input, Col: off + i + 1,
						Msg: fmt.Sprintf("exponent too large (the limit is %d)", maxLitExp)}
				}
				j++
			}
			if j == k {
				return &Error{Input: p.input, Col: off + i + 1,
					Msg: fmt.Sprintf("superscript %q needs digits after it, as in m⁻¹", string(r))}
			}
			if neg {
				v = -v
			}
			add(tSup, i, j)
			p.toks[len(p.toks)-1].sup = Rat{v, 1}
			i = j
		case isIdentStart(r):
			j := i + 1
			for j < n && isIdentPart(rs[j]) {
				j++
			}
			add(tIdent, i, j)
			i = j
		default:
			msg := fmt.Sprintf("unexpected character %q", string(r))
			if r == ',' {
				msg += "; write numbers without separators, as in 1800 or 1.8e3"
			}
			return &Error{Input: p.input, Col: off + i + 1, Msg: msg}
		}
	}
	p.toks = append(p.toks, token{kind: tEOF, col: off + n + 1})
	return nil
}

// scanNumber returns the end of the unsigned number starting at rs[i]:
// digits, an optional fraction and an optional exponent ("1.5e-3").
func scanNumber(rs []rune, i int) int {
	n := len(rs)
	for i < n && isDigit(rs[i]) {
		i++
	}
	if i < n && rs[i] == '.' {
		i++
		for i < n && isDigit(rs[i]) {
			i++
		}
	}
	if i < n && (rs[i] == 'e' || rs[i] == 'E') {
		j := i + 1
		if j < n && (rs[j] == '+' || rs[j] == '-') {
			j++
		}
		if j < n && isDigit(rs[j]) {
			for j < n && isDigit(rs[j]) {
				j++
			}
			i = j
		}
	}
	return i
}

// ---- parser ----

// value is a partly evaluated unit expression.
type value struct {
	dim   Dim
	scale float64
	text  string
	leaf  *def // the unit symbol when the value is exactly one symbol, else nil
}

func (p *parser) peek() token { return p.toks[p.pos] }

func (p *parser) next() token {
	t := p.toks[p.pos]
	if t.kind != tEOF {
		p.pos++
	}
	return t
}

// expr = term { ("*" | "/" | juxtaposition) term }, left to right.
func (p *parser) expr() (value, error) {
	v, err := p.term()
	if err != nil {
		return value{}, err
	}
	for {
		op := p.peek()
		switch op.kind {
		case tMul, tDiv:
			p.next()
		case tIdent, tNum, tLParen:
			// juxtaposition: "N m" is N*m
		default:
			return v, nil
		}
		w, err := p.term()
		if err != nil {
			return value{}, err
		}
		if op.kind == tDiv {
			v = value{dim: v.dim.Div(w.dim), scale: v.scale / w.scale, text: v.text + "/" + w.text}
		} else {
			v = value{dim: v.dim.Mul(w.dim), scale: v.scale * w.scale, text: v.text + "*" + w.text}
		}
		if err := p.check(op, v); err != nil {
			return value{}, err
		}
	}
}

// term = primary [ ("^" | "**") exponent | superscript ].
func (p *parser) term() (value, error) {
	v, err := p.primary()
	if err != nil {
		return value{}, err
	}
	var e Rat
	op := p.peek()
	switch op.kind {
	case tPow:
		p.next()
		if e, err = p.exponent(op); err != nil {
			return value{}, err
		}
	case tSup:
		p.next()
		e = op.sup
	default:
		return v, nil
	}
	if t := p.peek(); t.kind == tPow || t.kind == tSup {
		return value{}, p.errAt(t, "a power of a power needs parentheses, as in (m^2)^3")
	}
	v = value{
		dim:   v.dim.Pow(e),
		scale: math.Pow(v.scale, e.Float64()),
		text:  v.text + "^" + expText(e),
	}
	if err := p.check(op, v); err != nil {
		return value{}, err
	}
	return v, nil
}

// check enforces the limits on a value just built by operator op.
func (p *parser) check(op token, v value) error {
	if v.dim.maxExp() > maxDimExp {
		return p.errAt(op, fmt.Sprintf("the exponents of the dimension grow too large (the limit is %d)", maxDimExp))
	}
	if !(v.scale >= 0x1p-1022 && v.scale <= math.MaxFloat64) {
		return p.errAt(op, "the factor of this unit to SI is out of range")
	}
	return nil
}

// primary = symbol | number | "(" expr ")".
func (p *parser) primary() (value, error) {
	t := p.next()
	switch t.kind {
	case tIdent:
		d, pre, err := p.lookup(t)
		if err != nil {
			return value{}, err
		}
		return value{dim: d.dim, scale: d.scaleOf(pre), text: t.text, leaf: d}, nil
	case tNum:
		f, err := strconv.ParseFloat(t.text, 64)
		if err != nil || !(f >= 0x1p-1022 && f <= math.MaxFloat64) {
			return value{}, p.errAt(t, fmt.Sprintf("number %s is out of range for a unit factor", t.text))
		}
		return value{scale: f, text: t.text}, nil
	case tLParen:
		if p.peek().kind == tRParen {
			return value{}, p.errAt(p.peek(), `empty parentheses; write a unit inside, or "1"`)
		}
		v, err := p.expr()
		if err != nil {
			return value{}, err
		}
		if c := p.peek(); c.kind != tRParen {
			if c.kind == tEOF {
				return value{}, p.errAt(c, fmt.Sprintf(`missing ")" to close the "(" at col %d`, t.col))
			}
			return value{}, p.errAt(c, fmt.Sprintf("unexpected %q", c.text))
		}
		p.next()
		v.text = "(" + v.text + ")"
		return v, nil
	case tSign:
		return value{}, p.errAt(t, fmt.Sprintf("unexpected %q; a sign may only start an exponent, as in m^-1", t.text))
	case tSup:
		return value{}, p.errAt(t, fmt.Sprintf("exponent %q has no unit before it", t.text))
	case tRParen:
		return value{}, p.errAt(t, p.expected(t, `unexpected ")"`))
	case tEOF:
		return value{}, p.errAt(t, p.expected(t, "missing unit"))
	default: // tMul, tDiv, tPow
		return value{}, p.errAt(t, p.expected(t, fmt.Sprintf("unexpected %q", t.text)))
	}
}

// expected completes a message about a missing operand t, naming the
// operator before it when there is one.
func (p *parser) expected(t token, msg string) string {
	idx := p.pos - 1 // next has consumed t
	if t.kind == tEOF {
		idx = p.pos // next does not move past EOF
	}
	if idx > 0 {
		switch prev := p.toks[idx-1]; prev.kind {
		case tMul, tDiv, tPow, tLParen:
			return fmt.Sprintf("%s; expected a unit after %q", msg, prev.text)
		}
	}
	return msg + "; expected a unit such as kg, m^3 or 1"
}

// exponent = ["+"|"-"] number | "(" ["+"|"-"] number ["/" number] ")".
func (p *parser) exponent(op token) (Rat, error) {
	bad := func(t token) error {
		return p.errAt(t, fmt.Sprintf("expected an exponent after %q, as in m^2, m^-1, m^0.5 or m^(1/2)", op.text))
	}
	if p.peek().kind == tLParen {
		open := p.next()
		num, err := p.signedNumber(bad)
		if err != nil {
			return Rat{}, err
		}
		if p.peek().kind == tDiv {
			p.next()
			den, err := p.signedNumber(bad)
			if err != nil {
				return Rat{}, err
			}
			if !num.IsInt() || !den.IsInt() {
				return Rat{}, p.errAt(open, "a fractional exponent is written with whole numbers, as in (1/2)")
			}
			if den.IsZero() {
				return Rat{}, p.errAt(open, "zero denominator in the exponent")
			}
			num = num.Mul(Rat{den.Den, den.Num})
		}
		if c := p.peek(); c.kind != tRParen {
			if c.kind == tEOF {
				return Rat{}, p.errAt(c, fmt.Sprintf(`missing ")" to close the "(" at col %d`, open.col))
			}
			return Rat{}, p.errAt(c, fmt.Sprintf("unexpected %q in the exponent", c.text))
		}
		p.next()
		return num, nil
	}
	return p.signedNumber(bad)
}

// signedNumber reads ["+"|"-"] number as an exact rational: an integer or a
// decimal with at most maxExpDecimals digits after the point, and at most
// maxLitExp in size.
func (p *parser) signedNumber(bad func(token) error) (Rat, error) {
	negative := false
	if t := p.peek(); t.kind == tSign {
		p.next()
		negative = t.text == "-"
	}
	t := p.peek()
	if t.kind != tNum {
		return Rat{}, bad(t)
	}
	p.next()
	intPart, frac, hasPoint := strings.Cut(t.text, ".")
	if strings.ContainsAny(t.text, "eE") || (intPart == "" && frac == "") || (hasPoint && frac == "") {
		return Rat{}, p.errAt(t, fmt.Sprintf("exponent %s must be a whole number, a decimal such as 0.5, or a fraction such as (1/2)", t.text))
	}
	if len(frac) > maxExpDecimals {
		return Rat{}, p.errAt(t, fmt.Sprintf("exponent %s has more than %d decimals; write a fraction such as (1/3)", t.text, maxExpDecimals))
	}
	digits := strings.TrimLeft(intPart+frac, "0")
	if len(digits) > 9 {
		return Rat{}, p.errAt(t, fmt.Sprintf("exponent too large (the limit is %d)", maxLitExp))
	}
	n := 0
	if digits != "" {
		n, _ = strconv.Atoi(digits) // digits only, at most 9 of them
	}
	den := 1
	for range frac {
		den *= 10
	}
	r := normRat(n, den)
	if r.Num > maxLitExp*r.Den {
		return Rat{}, p.errAt(t, fmt.Sprintf("exponent too large (the limit is %d)", maxLitExp))
	}
	if negative {
		r = r.Neg()
	}
	return r, nil
}

// ---- symbols ----

// lookup resolves a unit symbol: an exact match first, then an SI prefix
// before a unit that takes one.
func (p *parser) lookup(t token) (*def, int, error) {
	sym := t.text
	if d, ok := table[sym]; ok {
		return &d, 0, nil
	}
	var refused string
	for _, pf := range prefixes {
		rest, ok := strings.CutPrefix(sym, pf.sym)
		if !ok || rest == "" {
			continue
		}
		d, ok := table[rest]
		if !ok {
			continue
		}
		if d.prefix {
			return &d, pf.exp, nil
		}
		if refused == "" && strings.HasPrefix(rest, pf.sym) {
			// A doubled letter ("hh", "mmin") is a typing slip, not a prefix.
			refused = fmt.Sprintf("unknown unit %q; did you mean %q?", sym, rest)
		}
		if refused == "" {
			refused = fmt.Sprintf("SI prefix %q is not allowed on %q; write the number in %s", pf.sym, rest, rest)
		}
	}
	if refused != "" {
		return nil, 0, p.errAt(t, refused)
	}
	return nil, 0, p.errAt(t, unknownMsg(sym))
}

// resolves reports whether sym is a known unit, prefixed or not.
func resolves(sym string) bool {
	if _, ok := table[sym]; ok {
		return true
	}
	for _, pf := range prefixes {
		if rest, ok := strings.CutPrefix(sym, pf.sym); ok && rest != "" {
			if d, ok := table[rest]; ok && d.prefix {
				return true
			}
		}
	}
	return false
}

// unknownMsg explains an unknown symbol and suggests what to write.
func unknownMsg(sym string) string {
	msg := fmt.Sprintf("unknown unit %q", sym)
	if s := suggest(sym); len(s) > 0 {
		q := make([]string, len(s))
		for i, x := range s {
			q[i] = strconv.Quote(x)
		}
		if len(q) == 1 {
			return msg + "; did you mean " + q[0] + "?"
		}
		return msg + "; did you mean " + strings.Join(q[:len(q)-1], ", ") + " or " + q[len(q)-1] + "?"
	}
	return msg + " (known units include kg, m, s, h, mol, K, degC, Pa, bar, J, W; see the units package documentation)"
}

// suggest returns what the user probably meant by an unknown symbol.
func suggest(sym string) []string {
	if h, ok := hints[sym]; ok {
		return h
	}
	// "m3" for "m^3"
	if head := strings.TrimRight(sym, "0123456789"); head != sym && head != "" && resolves(head) {
		return []string{head + "^" + sym[len(head):]}
	}
	cands := candidates()
	for _, c := range cands { // wrong case: "KG", "kpa", "mpa"
		if strings.EqualFold(c, sym) {
			return []string{c}
		}
	}
	// A slip is at most one edit in a short symbol and two in a long one;
	// a one-letter symbol is too short to guess from.
	n := utf8.RuneCountInString(sym)
	if n < 2 {
		return nil
	}
	limit := 1
	if n > 4 {
		limit = 2
	}
	best, bestD := "", limit+1
	for _, c := range cands {
		// On a tie the shorter spelling wins: a doubled or stray letter is
		// the commonest slip ("kgg" is "kg", not "kgf").
		if d := editDistance(sym, c); d < bestD || (d == bestD && len(c) < len(best)) {
			best, bestD = c, d
		}
	}
	if best == "" {
		return nil
	}
	return []string{best}
}

// candidates lists known spellings in a fixed order: the symbols sorted,
// then common prefixed forms.
func candidates() []string {
	syms := make([]string, 0, len(table))
	for s := range table {
		syms = append(syms, s)
	}
	sort.Strings(syms)
	out := syms
	for _, pf := range suggestPrefixes {
		for _, s := range syms {
			if table[s].prefix {
				out = append(out, pf+s)
			}
		}
	}
	return out
}

// editDistance is the optimal-string-alignment distance between a and b, in
// runes: insertions, deletions, substitutions and swaps of neighbours.
func editDistance(a, b string) int {
	ra, rb := []rune(a), []rune(b)
	prev2 := make([]int, len(rb)+1)
	prev := make([]int, len(rb)+1)
	cur := make([]int, len(rb)+1)
	for j := range prev {
		prev[j] = j
	}
	for i := 1; i <= len(ra); i++ {
		cur[0] = i
		for j := 1; j <= len(rb); j++ {
			cost := 1
			if ra[i-1] == rb[j-1] {
				cost = 0
			}
			cur[j] = min(prev[j]+1, cur[j-1]+1, prev[j-1]+cost)
			if i > 1 && j > 1 && ra[i-1] == rb[j-2] && ra[i-2] == rb[j-1] {
				cur[j] = min(cur[j], prev2[j-2]+1)
			}
		}
		prev2, prev, cur = prev, cur, prev2
	}
	return prev[len(rb)]
}
