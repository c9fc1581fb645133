package model

import (
	"fmt"
	"math"
	"sort"
	"strconv"
	"strings"

	"github.com/loopwright/loopwright/model/formula"
	"github.com/loopwright/loopwright/units"
)

// ExpandOptions are the settings of Expand. A nil *ExpandOptions means the
// defaults; a zero limit means its default.
type ExpandOptions struct {
	// Constants overrides constants of the file by name, as from the
	// command line. A name the file does not declare is an error.
	Constants map[string]float64

	MaxSetSize int // members of one set or range; default 1_000_000
	MaxScalars int // scalar equations, unknowns, parameters and defines in total; default 2_000_000
	MaxNodes   int // expression nodes after expansion; default 50_000_000
}

func (o *ExpandOptions) limits() (setSize, scalars, nodes int) {
	setSize, scalars, nodes = 1_000_000, 2_000_000, 50_000_000
	if o == nil {
		return
	}
	if o.MaxSetSize > 0 {
		setSize = o.MaxSetSize
	}
	if o.MaxScalars > 0 {
		scalars = o.MaxScalars
	}
	if o.MaxNodes > 0 {
		nodes = o.MaxNodes
	}
	return
}

// irange is an integer range lo..hi, both included.
type irange struct {
	name   string // the set's name, or "" for a literal range
	lo, hi int
}

func (r irange) size() int { return r.hi - r.lo + 1 }

func (r irange) String() string {
	if r.name != "" {
		return fmt.Sprintf("%s (%d..%d)", r.name, r.lo, r.hi)
	}
	return fmt.Sprintf("%d..%d", r.lo, r.hi)
}

// family is a declared parameter, unknown, input or disturbance, scalar or
// indexed; its members take consecutive slots from base.
type family struct {
	decl    *symDecl
	role    Role
	roleBy  *symDecl // the inputs/disturbances entry that gave it its role
	unknown bool
	ranges  []irange
	base    int
	size    int
	unit    units.Unit
	used    bool
}

type defFamily struct {
	decl   *defineDecl
	ranges []irange
	vars   []string
	inst   []defInst
	used   bool
}

type defInst struct {
	state int // 0 not built, 1 being built, 2 built, 3 failed
	v     val
}

// val is a translated expression: its node and its dimension. any is true
// for a literal 0, which takes whatever dimension its context needs.
type val struct {
	n   Node
	d   units.Dim
	any bool
}

type binding struct {
	name string
	v    int
}

// ctx is where a formula is being translated.
type ctx struct {
	m    *scalarMap
	env  []binding
	what string // `equation "tray[5]"`, for messages
	def  bool   // inside a define body (references there do not make defines used)
}

func (c *ctx) at(off int) Pos { return c.m.at(off) }

func (c *ctx) lookup(name string) (int, bool) {
	for i := len(c.env) - 1; i >= 0; i-- {
		if c.env[i].name == name {
			return c.env[i].v, true
		}
	}
	return 0, false
}

type expander struct {
	f    *File
	opts *ExpandOptions
	errs ErrorList

	maxSet, maxScalars, maxNodes int
	scalars, nodes               int

	consts   map[string]float64
	sets     map[string]irange
	setPos   map[string]Pos
	fams     map[string]*family
	defs     map[string]*defFamily
	sys      *System
	famOrder []*family
}

// abort stops an expansion that ran into a hard limit.
type abort struct{}

// Expand unrolls sets, for-families and defines into a System of scalar
// equations in SI, checks every equation and define for dimensional
// consistency, and resolves inputs, outputs, disturbances, the envelope and
// the checks. The error, when not nil, is an ErrorList.
func (f *File) Expand(opts *ExpandOptions) (sys *System, err error) {
	e := &expander{f: f, opts: opts, consts: map[string]float64{}, sets: map[string]irange{},
		setPos: map[string]Pos{}, fams: map[string]*family{}, defs: map[string]*defFamily{}}
	e.maxSet, e.maxScalars, e.maxNodes = opts.limits()
	e.sys = &System{Name: f.Model, About: f.About, File: f.Name, Constants: e.consts}
	func() {
		defer func() {
			if r := recover(); r != nil {
				if _, ok := r.(abort); !ok {
					panic(r)
				}
			}
		}()
		e.run()
	}()
	e.errs.Sort()
	if len(e.errs) > 0 {
		return nil, e.errs
	}
	return e.sys, nil
}

func (e *expander) errorf(pos Pos, format string, args ...any) {
	e.errs.Add(pos, format, args...)
	if len(e.errs) > 4*MaxErrors {
		panic(abort{})
	}
}

func (e *expander) fileWide() Pos { return Pos{File: e.f.Name} }

func (e *expander) run() {
	e.constants()
	if len(e.errs) > 0 {
		return
	}
	e.setsPass()
	if len(e.errs) > 0 {
		return
	}
	active := func(w *fx) bool { return e.active(w) }
	e.errs = append(e.errs, e.f.checkNames(active)...)
	if len(e.errs) > 0 {
		return
	}
	e.symbolsPass()
	for _, d := range e.f.defines {
		if !e.active(d.when) {
			continue
		}
		e.defFamily(d)
	}
	if len(e.errs) > 0 {
		return
	}
	e.equationsPass()
	e.definesPass()
	e.outputsPass()
	e.envelopePass()
	e.checksPass()
	if len(e.errs) == 0 {
		e.warnings()
	}
	e.sys.index = buildIndex(e.sys)
}

// active evaluates a when condition (nil: always).
func (e *expander) active(w *fx) bool {
	if w == nil {
		return true
	}
	c := &ctx{m: w.m, what: "when condition"}
	v, err := e.ceval(w.e, c, 0)
	if err != nil {
		e.errs.Add(err.pos, "when: %s", err.msg)
		return false
	}
	return v != 0
}

func (e *expander) constants() {
	declared := map[string]bool{}
	var names []string
	for _, c := range e.f.constants {
		declared[c.name] = true
		names = append(names, c.name)
	}
	if e.opts != nil {
		for _, k := range sortedKeys(e.opts.Constants) {
			if !declared[k] {
				if s := nearest(k, names); s != "" {
					e.errorf(e.fileWide(), "constant override %q: the model has no constant %q; did you mean %q?", k, k, s)
				} else if len(names) > 0 {
					e.errorf(e.fileWide(), "constant override %q: the model has no constant %q; its constants are %s", k, k, strings.Join(names, ", "))
				} else {
					e.errorf(e.fileWide(), "constant override %q: the model declares no constants", k)
				}
			}
			if v := e.opts.Constants[k]; math.IsInf(v, 0) || math.IsNaN(v) {
				e.errorf(e.fileWide(), "constant override %q: %v is not a finite number", k, v)
			}
		}
	}
	for _, c := range e.f.constants {
		if e.opts != nil {
			if v, ok := e.opts.Constants[c.name]; ok {
				e.consts[c.name] = v
				continue
			}
		}
		v, err := e.ceval(c.val.e, &ctx{m: c.val.m, what: fmt.Sprintf("constant %q", c.name)}, 0)
		if err != nil {
			e.errorf(err.pos, "constant %q: %s", c.name, err.msg)
			continue
		}
		e.consts[c.name] = v
	}
}

func (e *expander) setsPass() {
	for _, s := range e.f.sets {
		r, ok := e.rangeOf(s.rng, &ctx{m: s.m, what: fmt.Sprintf("set %q", s.name)})
		if !ok {
			continue
		}
		r.name = s.name
		e.sets[s.name] = r
		e.setPos[s.name] = s.pos
	}
}

// rangeOf evaluates a set name or lo..hi with constants (and the loop
// variables of c).
func (e *expander) rangeOf(rg formula.Range, c *ctx) (irange, bool) {
	if rg.Set != "" {
		r, ok := e.sets[rg.Set]
		if !ok {
			e.undefinedSet(c.at(rg.Off), rg.Set, c.what)
			return irange{}, false
		}
		return r, true
	}
	lo, err := e.ceval(rg.Lo, c, 0)
	if err != nil {
		e.errorf(err.pos, "%s: %s", c.what, err.msg)
		return irange{}, false
	}
	hi, err := e.ceval(rg.Hi, c, 0)
	if err != nil {
		e.errorf(err.pos, "%s: %s", c.what, err.msg)
		return irange{}, false
	}
	if lo != math.Trunc(lo) || hi != math.Trunc(hi) || math.Abs(lo) > 1e15 || math.Abs(hi) > 1e15 {
		e.errorf(c.at(rg.Off), "%s: the bounds of a range are whole numbers, got %s..%s", c.what, fmtNum(lo), fmtNum(hi))
		return irange{}, false
	}
	if hi < lo {
		e.errorf(c.at(rg.Off), "%s: the range %s..%s is empty; the upper bound must be at least the lower", c.what, fmtNum(lo), fmtNum(hi))
		return irange{}, false
	}
	if hi-lo+1 > float64(e.maxSet) {
		e.errorf(c.at(rg.Off), "%s: the range %s..%s has %s members; the limit is %d", c.what, fmtNum(lo), fmtNum(hi), fmtNum(hi-lo+1), e.maxSet)
		return irange{}, false
	}
	return irange{lo: int(lo), hi: int(hi)}, true
}

func (e *expander) undefinedSet(pos Pos, name, what string) {
	names := sortedKeys(e.sets)
	if s := nearest(name, names); s != "" {
		e.errorf(pos, "%s: no set named %q; did you mean %q?", what, name, s)
		return
	}
	if len(names) == 0 {
		e.errorf(pos, "%s: no set named %q; declare it under sets:, as in %s: 1..N", what, name, name)
		return
	}
	e.errorf(pos, "%s: no set named %q; the sets are %s", what, name, strings.Join(names, ", "))
}

// count adds n scalars to the running total, failing past the limit.
func (e *expander) count(n int, pos Pos, what string) bool {
	if n < 0 || e.scalars+n > e.maxScalars {
		e.errorf(pos, "%s: the model would have more than %d scalar quantities and equations; reduce the set sizes", what, e.maxScalars)
		panic(abort{})
	}
	e.scalars += n
	return true
}

// product is the number of members of ranges, or -1 past the limit.
func (e *expander) product(rs []irange) int {
	n := 1
	for _, r := range rs {
		if r.size() <= 0 {
			return 0
		}
		if n > e.maxScalars/r.size() {
			return -1
		}
		n *= r.size()
	}
	return n
}

func (e *expander) symbolsPass() {
	// Parameters and unknowns first, in file order; then inputs and
	// disturbances, which either name a parameter or declare a new one.
	for _, d := range e.f.symbols {
		if d.roleOnly || !e.active(d.when) {
			continue
		}
		e.newFamily(d, roleOf(d.kind))
	}
	roleSeen := map[string]*symDecl{}
	for _, d := range e.f.symbols {
		if !d.roleOnly || !e.active(d.when) {
			continue
		}
		role := roleOf(d.kind)
		if prev, ok := roleSeen[d.name]; ok {
			e.errorf(d.pos, "%q is declared both as %s and as %s", d.name, prev.kind, d.kind)
			e.errs.addNote(d.pos, prev.pos, "other declaration of %q", d.name)
			continue
		}
		roleSeen[d.name] = d
		if fam, ok := e.fams[d.name]; ok {
			if fam.unknown {
				e.errorf(d.pos, "%s %q names a variable (an unknown of the solver); an %s must be a parameter or a new quantity", d.kind, d.name, d.kind)
				e.errs.addNote(d.pos, fam.decl.pos, "other declaration of %q", d.name)
				continue
			}
			if d.hasValue || d.unit != nil || d.over != nil {
				e.errorf(d.pos, "%s %q names the parameter declared elsewhere: give its value, unit and over there, and only min, max, span and note here", d.kind, d.name)
				e.errs.addNote(d.pos, fam.decl.pos, "other declaration of %q", d.name)
				continue
			}
			fam.role = role
			fam.roleBy = d
			for k := 0; k < fam.size; k++ {
				e.sys.Params[fam.base+k].Role = role
			}
			e.applyBounds(fam, d)
			e.addRole(fam)
			continue
		}
		if e.nameTaken(d.name) {
			e.errorf(d.pos, "%s %q names a %s; an %s must be a parameter or a new quantity", d.kind, d.name, e.kindOfName(d.name), d.kind)
			continue
		}
		if !d.hasValue {
			e.errorf(d.pos, "%s %q is not a parameter of the model, so it needs a value: {value: <number>, unit: ...}", d.kind, d.name)
			continue
		}
		fam := e.newFamily(d, role)
		if fam != nil {
			e.addRole(fam)
		}
	}
}

func (e *expander) addRole(fam *family) {
	for k := 0; k < fam.size; k++ {
		if fam.role == RoleInput {
			e.sys.Inputs = append(e.sys.Inputs, fam.base+k)
		} else {
			e.sys.Disturbances = append(e.sys.Disturbances, fam.base+k)
		}
	}
}

func (e *expander) nameTaken(name string) bool {
	if _, ok := e.consts[name]; ok {
		return true
	}
	if _, ok := e.sets[name]; ok {
		return true
	}
	for _, d := range e.f.defines {
		if d.name == name && e.active(d.when) {
			return true
		}
	}
	return false
}

func (e *expander) kindOfName(name string) string {
	if _, ok := e.consts[name]; ok {
		return "constant"
	}
	if _, ok := e.sets[name]; ok {
		return "set"
	}
	return "define"
}

func roleOf(k symKind) Role {
	switch k {
	case kindVariable:
		return RoleUnknown
	case kindInput:
		return RoleInput
	case kindDisturbance:
		return RoleDisturbance
	}
	return RoleParameter
}

func (e *expander) newFamily(d *symDecl, role Role) *family {
	fam := &family{decl: d, role: role, unknown: role == RoleUnknown}
	if d.unit != nil {
		fam.unit = d.unit.u
	} else {
		fam.unit = units.Unit{Scale: 1}
	}
	for _, s := range d.over {
		r, ok := e.sets[s.name]
		if !ok {
			e.undefinedSet(s.pos, s.name, fmt.Sprintf("%s %q", d.kind, d.name))
			return nil
		}
		fam.ranges = append(fam.ranges, r)
	}
	fam.size = e.product(fam.ranges)
	e.count(fam.size, d.pos, fmt.Sprintf("%s %q", d.kind, d.name))
	what := fmt.Sprintf("%s %q", d.kind, d.name)
	// Values: one, or a list with one per member.
	var values []float64
	if d.value != nil {
		if d.value.isList {
			if len(d.value.list) != fam.size {
				e.errorf(d.value.pos, "%s: the list of %s has %d entries but %s has %d members", what, d.valueKey, len(d.value.list), d.name, fam.size)
				return nil
			}
			for _, v := range d.value.list {
				x, ok := e.toSI(v, fam.unit, false, what, d.valueKey)
				if !ok {
					return nil
				}
				values = append(values, x)
			}
		} else {
			x, ok := e.toSI(d.value, fam.unit, false, what, d.valueKey)
			if !ok {
				return nil
			}
			values = []float64{x}
		}
	}
	if fam.unknown {
		fam.base = len(e.sys.Unknowns)
	} else {
		fam.base = len(e.sys.Params)
	}
	uu := modelUnit(fam.unit, d.unit != nil)
	idx := make([]int, len(fam.ranges))
	for k := 0; k < fam.size; k++ {
		unflatten(k, fam.ranges, idx)
		sym := Symbol{Name: memberName(d.name, idx), Base: d.name, Role: role,
			Min: math.Inf(-1), Max: math.Inf(1), Unit: uu, Note: d.note, Pos: d.pos}
		if len(idx) > 0 {
			sym.Index = append([]int(nil), idx...)
		}
		switch {
		case len(values) == 1:
			sym.Value = values[0]
		case len(values) > 1:
			sym.Value = values[k]
		}
		if fam.unknown {
			e.sys.Unknowns = append(e.sys.Unknowns, sym)
		} else {
			e.sys.Params = append(e.sys.Params, sym)
		}
	}
	e.fams[d.name] = fam
	e.famOrder = append(e.famOrder, fam)
	e.applyBounds(fam, d)
	if fam.unknown && len(values) == 0 {
		// Default guess: the middle of min and max when both are given,
		// else 1 in the declared unit.
		for k := 0; k < fam.size; k++ {
			s := &e.sys.Unknowns[fam.base+k]
			if !math.IsInf(s.Min, 0) && !math.IsInf(s.Max, 0) {
				s.Value = (s.Min + s.Max) / 2
			} else {
				s.Value = fam.unit.ToSI(1)
				if s.Value < s.Min {
					s.Value = s.Min
				}
				if s.Value > s.Max {
					s.Value = s.Max
				}
			}
		}
	} else if fam.unknown {
		for k := 0; k < fam.size; k++ {
			s := &e.sys.Unknowns[fam.base+k]
			if s.Value < s.Min || s.Value > s.Max {
				e.errorf(d.value.pos, "%s: the guess %s is outside min..max (%s..%s)", what, fmtNum(fam.unit.FromSI(s.Value)), fmtNum(fam.unit.FromSI(s.Min)), fmtNum(fam.unit.FromSI(s.Max)))
				break
			}
		}
	}
	return fam
}

// applyBounds sets min, max and span from d on every member of fam.
func (e *expander) applyBounds(fam *family, d *symDecl) {
	what := fmt.Sprintf("%s %q", d.kind, d.name)
	lo, hi, span := math.Inf(-1), math.Inf(1), 0.0
	ok := true
	if d.min != nil {
		lo, ok = e.toSI(d.min, fam.unit, false, what, "min")
	}
	if ok && d.max != nil {
		hi, ok = e.toSI(d.max, fam.unit, false, what, "max")
	}
	if ok && d.span != nil {
		span, ok = e.toSI(d.span, fam.unit, true, what, "span")
		if ok && span < 0 {
			e.errorf(d.span.pos, "%s: span %s is negative; a span is the size of a move, give it as a positive number", what, fmtNum(d.span.num))
			ok = false
		}
	}
	if !ok {
		return
	}
	if lo > hi {
		e.errorf(d.min.pos, "%s: min %s is greater than max %s", what, fmtNum(d.min.num), fmtNum(d.max.num))
		return
	}
	for k := 0; k < fam.size; k++ {
		var s *Symbol
		if fam.unknown {
			s = &e.sys.Unknowns[fam.base+k]
		} else {
			s = &e.sys.Params[fam.base+k]
		}
		if d.min != nil {
			s.Min = lo
		}
		if d.max != nil {
			s.Max = hi
		}
		if d.span != nil {
			s.Span = span
		}
		if d.note != "" && s.Note == "" {
			s.Note = d.note
		}
		if !fam.unknown && (s.Value < s.Min || s.Value > s.Max) {
			e.errorf(d.pos, "%s: the value %s of %s is outside min..max (%s..%s)", what, fmtNum(fam.unit.FromSI(s.Value)), s.Name, fmtNum(fam.unit.FromSI(s.Min)), fmtNum(fam.unit.FromSI(s.Max)))
			return
		}
	}
}

// toSI converts a written value into SI in declared unit u.
func (e *expander) toSI(v *valueSpec, u units.Unit, diff bool, what, key string) (float64, bool) {
	if v.isList {
		e.errorf(v.pos, "%s: %s takes one number here, not a list", what, key)
		return 0, false
	}
	var x float64
	switch {
	case v.unit == nil && diff:
		x = u.DiffToSI(v.num)
	case v.unit == nil:
		x = u.ToSI(v.num)
	default:
		if v.unit.Dim != u.Dim {
			e.errorf(v.pos, "%s: %s is given in %s but the quantity is in %s", what, key, describeUnit(*v.unit), describeUnit(u))
			return 0, false
		}
		if diff {
			x = v.unit.DiffToSI(v.num)
		} else {
			x = v.unit.ToSI(v.num)
		}
	}
	if math.IsInf(x, 0) || math.IsNaN(x) {
		e.errorf(v.pos, "%s: %s overflows when converted to SI", what, key)
		return 0, false
	}
	return x, true
}

// describeUnit names a unit with its dimension: "kmol/h (mol/s, molar flow)".
func describeUnit(u units.Unit) string {
	if u.Dim.IsDimensionless() {
		if u.Text == "" {
			return "no unit (dimensionless)"
		}
		return u.Text + " (dimensionless)"
	}
	d := u.Dim.Describe()
	if u.Text == "" || u.Text == d {
		return d
	}
	if u.Text == u.Dim.String() {
		return d
	}
	return u.Text + " (" + d + ")"
}

func modelUnit(u units.Unit, declared bool) Unit {
	mu := Unit{Dim: u.Dim.String(), Scale: u.Scale, Offset: u.Offset}
	if declared {
		mu.Text = u.Text
	}
	if mu.Scale == 0 {
		mu.Scale = 1
	}
	return mu
}

// siUnit is the coherent SI unit of a dimension, for derived quantities.
func siUnit(d units.Dim) Unit {
	return Unit{Text: d.String(), Dim: d.String(), Scale: 1}
}

func unflatten(k int, rs []irange, idx []int) {
	for i := len(rs) - 1; i >= 0; i-- {
		n := rs[i].size()
		idx[i] = rs[i].lo + k%n
		k /= n
	}
}

func memberName(base string, idx []int) string {
	if len(idx) == 0 {
		return base
	}
	var b strings.Builder
	b.WriteString(base)
	b.WriteByte('[')
	for i, x := range idx {
		if i > 0 {
			b.WriteByte(',')
		}
		b.WriteString(strconv.Itoa(x))
	}
	b.WriteByte(']')
	return b.String()
}

func fmtNum(v float64) string {
	if v == math.Trunc(v) && math.Abs(v) < 1e21 {
		return strconv.FormatFloat(v, 'f', -1, 64)
	}
	return strconv.FormatFloat(v, 'g', -1, 64)
}

func dimText(d units.Dim) string {
	if d.IsDimensionless() {
		return "dimensionless"
	}
	return d.String()
}

// loopRanges evaluates the ranges of a for clause.
func (e *expander) loopRanges(ls *loopsSpec, what string) ([]irange, []string, bool) {
	if ls == nil {
		return nil, nil, true
	}
	c := &ctx{m: ls.m, what: what}
	var rs []irange
	var vars []string
	for _, l := range ls.loops {
		if _, ok := e.consts[l.Var]; ok {
			e.errorf(c.at(l.Off), "%s: the index %q is the name of a constant; choose another index name", what, l.Var)
			return nil, nil, false
		}
		if _, ok := e.fams[l.Var]; ok {
			e.errorf(c.at(l.Off), "%s: the index %q is the name of a quantity; choose another index name", what, l.Var)
			return nil, nil, false
		}
		r, ok := e.rangeOf(l.Range, c)
		if !ok {
			return nil, nil, false
		}
		rs = append(rs, r)
		vars = append(vars, l.Var)
	}
	return rs, vars, true
}

func (e *expander) defFamily(d *defineDecl) {
	what := fmt.Sprintf("define %q", d.name)
	rs, vars, ok := e.loopRanges(d.loops, what)
	if !ok {
		return
	}
	n := e.product(rs)
	if n < 0 {
		e.count(-1, d.pos, what)
	}
	e.count(n, d.pos, what)
	e.defs[d.name] = &defFamily{decl: d, ranges: rs, vars: vars, inst: make([]defInst, n)}
}

// forEach runs f for every member of the ranges with the loop variables
// bound, passing the index tuple.
func forEach(rs []irange, vars []string, f func(env []binding, idx []int)) {
	n := 1
	for _, r := range rs {
		n *= r.size()
	}
	idx := make([]int, len(rs))
	env := make([]binding, len(rs))
	for k := 0; k < n; k++ {
		unflatten(k, rs, idx)
		for i := range rs {
			env[i] = binding{vars[i], idx[i]}
		}
		f(env, idx)
	}
}

func (e *expander) equationsPass() {
	for _, d := range e.f.equations {
		if !e.active(d.when) {
			continue
		}
		what := fmt.Sprintf("equation %q", d.name)
		rs, vars, ok := e.loopRanges(d.loops, what)
		if !ok {
			continue
		}
		n := e.product(rs)
		e.count(n, d.pos, what)
		eqPos := d.m.at(0)
		forEach(rs, vars, func(env []binding, idx []int) {
			name := memberName(d.name, idx)
			c := &ctx{m: d.m, env: append([]binding(nil), env...), what: fmt.Sprintf("equation %q", name)}
			l, okL := e.translate(d.lhs, c)
			r, okR := e.translate(d.rhs, c)
			if !okL || !okR {
				return
			}
			if !l.any && !r.any && l.d != r.d {
				e.errorf(eqPos, "%s: the two sides differ in dimension: %s against %s", c.what, dimText(l.d), dimText(r.d))
				return
			}
			e.node()
			e.sys.Equations = append(e.sys.Equations, Equation{Name: name,
				Residual: &Binary{Pos: d.m.at(d.eqOff), Op: OpSub, L: l.n, R: r.n}, Pos: eqPos})
		})
	}
}

func (e *expander) definesPass() {
	for _, d := range e.f.defines {
		df, ok := e.defs[d.name]
		if !ok {
			continue
		}
		idx := make([]int, len(df.ranges))
		for k := range df.inst {
			unflatten(k, df.ranges, idx)
			v, ok := e.defInstance(df, k, idx)
			if !ok {
				continue
			}
			u := siUnit(v.d)
			if d.unit != nil {
				u = modelUnit(d.unit.u, true)
			}
			e.sys.Defines = append(e.sys.Defines, Output{Name: memberName(d.name, idx), Expr: v.n, Unit: u, Pos: d.pos})
		}
	}
}

// defInstance builds (once) the member k of a define family.
func (e *expander) defInstance(df *defFamily, k int, idx []int) (val, bool) {
	in := &df.inst[k]
	switch in.state {
	case 1:
		e.errorf(df.decl.pos, "define %q refers to itself (a cycle of defines); a define cannot depend on its own value", memberName(df.decl.name, idx))
		in.state = 3
		return val{}, false
	case 2:
		return in.v, true
	case 3:
		return val{}, false
	}
	in.state = 1
	env := make([]binding, len(idx))
	for i := range idx {
		env[i] = binding{df.vars[i], idx[i]}
	}
	name := memberName(df.decl.name, idx)
	c := &ctx{m: df.decl.is.m, env: env, what: fmt.Sprintf("define %q", name), def: true}
	v, ok := e.translate(df.decl.is.e, c)
	if in.state == 3 {
		return val{}, false
	}
	if !ok {
		in.state = 3
		return val{}, false
	}
	if u := df.decl.unit; u != nil && !v.any && v.d != u.u.Dim {
		e.errorf(u.pos, "define %q: its unit %s (%s) does not match the dimension of its expression, %s", name, u.text, dimText(u.u.Dim), dimText(v.d))
		in.state = 3
		return val{}, false
	}
	in.state, in.v = 2, v
	return v, true
}

func (e *expander) outputsPass() {
	for _, o := range e.f.outputs {
		if !e.active(o.when) {
			continue
		}
		what := fmt.Sprintf("output %q", o.name)
		type item struct {
			name string
			v    val
			u    Unit
			ud   units.Dim
		}
		var items []item
		if o.of != nil {
			c := &ctx{m: o.of.m, what: what}
			v, ok := e.translate(o.of.e, c)
			if !ok {
				continue
			}
			items = append(items, item{o.name, v, siUnit(v.d), v.d})
		} else if fam, ok := e.fams[o.name]; ok {
			fam.used = true
			idx := make([]int, len(fam.ranges))
			for k := 0; k < fam.size; k++ {
				unflatten(k, fam.ranges, idx)
				var n Node
				var s Symbol
				if fam.unknown {
					n, s = &Var{Pos: o.pos, Index: fam.base + k}, e.sys.Unknowns[fam.base+k]
				} else {
					n, s = &Param{Pos: o.pos, Index: fam.base + k}, e.sys.Params[fam.base+k]
				}
				items = append(items, item{memberName(o.name, idx), val{n: n, d: fam.unit.Dim}, s.Unit, fam.unit.Dim})
			}
		} else if df, ok := e.defs[o.name]; ok {
			df.used = true
			idx := make([]int, len(df.ranges))
			for k := range df.inst {
				unflatten(k, df.ranges, idx)
				v, ok := e.defInstance(df, k, idx)
				if !ok {
					break
				}
				u := siUnit(v.d)
				if df.decl.unit != nil {
					u = modelUnit(df.decl.unit.u, true)
				}
				items = append(items, item{memberName(o.name, idx), v, u, v.d})
			}
		} else {
			e.undefined(o.pos, o.name, what+" names nothing known:")
			continue
		}
		for _, it := range items {
			u, ud := it.u, it.ud
			if o.unit != nil {
				if !it.v.any && o.unit.u.Dim != it.v.d {
					e.errorf(o.unit.pos, "%s: unit %s (%s) does not match the dimension of the output, %s", what, o.unit.text, dimText(o.unit.u.Dim), dimText(it.v.d))
					break
				}
				u, ud = modelUnit(o.unit.u, true), o.unit.u.Dim
			}
			span := 0.0
			if o.span != nil {
				uu := units.Unit{Text: u.Text, Dim: ud, Scale: u.Scale, Offset: u.Offset}
				s, ok := e.toSI(o.span, uu, true, what, "span")
				if !ok {
					break
				}
				if s < 0 {
					e.errorf(o.span.pos, "%s: span %s is negative; give the largest acceptable deviation as a positive number", what, fmtNum(o.span.num))
					break
				}
				span = s
			}
			e.sys.Outputs = append(e.sys.Outputs, Output{Name: it.name, Expr: it.v.n, Unit: u, Span: span, Pos: o.pos})
		}
	}
}

func (e *expander) envelopePass() {
	for _, a := range e.f.envelope {
		slot, ok := -1, false
		if fam, found := e.fams[a.name]; found && !fam.unknown && fam.size == 1 {
			slot, ok = fam.base, true
		} else {
			for i, p := range e.sys.Params {
				if p.Name == normName(a.name) {
					slot, ok = i, true
				}
			}
		}
		if !ok {
			if fam, found := e.fams[a.name]; found && fam.unknown {
				e.errorf(a.pos, "envelope axis %q is a variable (an unknown); an axis is a parameter, input or disturbance", a.name)
			} else if found {
				e.errorf(a.pos, "envelope axis %q is an indexed family; name one member, as in \"%s[1]\"", a.name, a.name)
			} else {
				var names []string
				for _, p := range e.sys.Params {
					names = append(names, p.Base)
				}
				e.undefinedIn(a.pos, a.name, fmt.Sprintf("envelope axis %q: no parameter, input or disturbance named %q", a.name, a.name), names)
			}
			continue
		}
		p := e.sys.Params[slot]
		u := units.Unit{Text: p.Unit.Text, Scale: p.Unit.Scale, Offset: p.Unit.Offset}
		if fam := e.famOfParam(slot); fam != nil {
			u = fam.unit
		}
		what := fmt.Sprintf("envelope axis %q", a.name)
		from, ok1 := e.toSI(a.from, u, false, what, "from")
		to, ok2 := e.toSI(a.to, u, false, what, "to")
		if !ok1 || !ok2 {
			continue
		}
		if a.log && (from <= 0 || to <= 0) {
			e.errorf(a.pos, "%s: log spacing needs from and to above zero", what)
			continue
		}
		e.sys.Envelope = append(e.sys.Envelope, Axis{Param: slot, From: from, To: to, Points: a.points, Log: a.log, Pos: a.pos})
	}
}

func (e *expander) famOfParam(slot int) *family {
	for _, f := range e.famOrder {
		if !f.unknown && slot >= f.base && slot < f.base+f.size {
			return f
		}
	}
	return nil
}

func normName(s string) string { return strings.Join(strings.Fields(s), "") }

func (e *expander) checksPass() {
	for _, d := range e.f.checks {
		if !e.active(d.when) {
			continue
		}
		what := fmt.Sprintf("check %q", d.name)
		rs, vars, ok := e.loopRanges(d.loops, what)
		if !ok {
			continue
		}
		e.count(e.product(rs), d.pos, what)
		failed := false
		forEach(rs, vars, func(env []binding, idx []int) {
			if failed {
				return
			}
			name := memberName(d.name, idx)
			c := &ctx{m: d.of.m, env: append([]binding(nil), env...), what: fmt.Sprintf("check %q", name)}
			v, ok := e.translate(d.of.e, c)
			if !ok {
				failed = true
				return
			}
			u := units.Unit{Text: v.d.String(), Dim: v.d, Scale: 1}
			mu := siUnit(v.d)
			if d.unit != nil {
				if !v.any && d.unit.u.Dim != v.d {
					e.errorf(d.unit.pos, "%s: unit %s (%s) does not match the dimension of its expression, %s", c.what, d.unit.text, dimText(d.unit.u.Dim), dimText(v.d))
					failed = true
					return
				}
				u, mu = d.unit.u, modelUnit(d.unit.u, true)
			}
			lo, hi := math.Inf(-1), math.Inf(1)
			if d.min != nil {
				if lo, ok = e.toSI(d.min, u, false, c.what, "min"); !ok {
					failed = true
					return
				}
			}
			if d.max != nil {
				if hi, ok = e.toSI(d.max, u, false, c.what, "max"); !ok {
					failed = true
					return
				}
			}
			if lo > hi {
				e.errorf(d.min.pos, "%s: min is greater than max", c.what)
				failed = true
				return
			}
			e.sys.Checks = append(e.sys.Checks, Check{Name: name, Expr: v.n, Min: lo, Max: hi, Unit: mu, Note: d.note, Pos: d.pos})
		})
	}
}

// warnings lists parameters, inputs and disturbances that no equation
// uses, and defines that nothing uses.
func (e *expander) warnings() {
	used := make([]bool, len(e.sys.Params))
	seen := map[Node]bool{}
	markUsed := func(n Node) {
		if p, ok := n.(*Param); ok {
			used[p.Index] = true
		}
	}
	for _, q := range e.sys.Equations {
		walkLeaves(q.Residual, seen, markUsed)
	}
	for _, fam := range e.famOrder {
		if fam.unknown {
			continue
		}
		any := false
		for k := 0; k < fam.size; k++ {
			any = any || used[fam.base+k]
		}
		if !any {
			kind := fam.role.String()
			pos := fam.decl.pos
			e.sys.Warnings = append(e.sys.Warnings, Warning{Pos: pos, Msg: fmt.Sprintf("%s %q is not used by any equation", kind, fam.decl.name)})
		}
	}
	for _, d := range e.f.defines {
		if df, ok := e.defs[d.name]; ok && !df.used {
			e.sys.Warnings = append(e.sys.Warnings, Warning{Pos: d.pos, Msg: fmt.Sprintf("define %q is not used by any equation, output or check", d.name)})
		}
	}
	sort.SliceStable(e.sys.Warnings, func(i, j int) bool { return posLess(e.sys.Warnings[i].Pos, e.sys.Warnings[j].Pos) })
}
