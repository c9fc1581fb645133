package model

import (
	"bytes"
	"fmt"
	"io"
	"math"
	"os"
	"regexp"
	"sort"
	"strconv"
	"strings"

	"github.com/loopwright/loopwright/model/formula"
	"github.com/loopwright/loopwright/units"
	"gopkg.in/yaml.v3"
)

// MaxFileSize is the largest model file Load reads.
const MaxFileSize = 8 << 20

// File is a loaded and structurally checked model file, before expansion.
// Its formulas are parsed into trees that keep their file positions.
type File struct {
	Name  string // the name given to Load, used in every message
	Model string // the model's name
	About string // the about paragraph

	src       *source
	modelPos  Pos
	constants []*constDecl
	sets      []*setDecl
	symbols   []*symDecl // parameters, variables, and inputs/disturbances
	outputs   []*outputDecl
	defines   []*defineDecl
	equations []*eqDecl
	envelope  []*axisDecl
	checks    []*checkDecl
}

// fx is a parsed formula with the map from its offsets to file positions.
type fx struct {
	e formula.Expr
	m *scalarMap
}

func (f fx) at(off int) Pos { return f.m.at(off) }

type loopsSpec struct {
	loops []formula.Loop
	m     *scalarMap
	pos   Pos
}

type constDecl struct {
	name string
	pos  Pos
	val  fx
}

type setDecl struct {
	name string
	pos  Pos
	rng  formula.Range
	m    *scalarMap
}

type symKind int

const (
	kindParameter symKind = iota
	kindVariable
	kindInput
	kindDisturbance
)

func (k symKind) String() string {
	return [...]string{"parameter", "variable", "input", "disturbance"}[k]
}

type unitSpec struct {
	text string
	u    units.Unit
	pos  Pos
}

// valueSpec is a value as written: a number, "<number> <unit>", or a list.
type valueSpec struct {
	pos     Pos
	num     float64
	unit    *units.Unit // nil for a bare number
	unitTxt string
	list    []*valueSpec
	isList  bool
}

type symDecl struct {
	kind     symKind
	name     string
	pos      Pos
	section  string // the top-level key it is declared under
	unit     *unitSpec
	value    *valueSpec // value (parameters, inputs, disturbances) or guess (variables)
	min, max *valueSpec
	span     *valueSpec
	over     []setRef
	note     string
	when     *fx
	roleOnly bool // an input/disturbance entry that may name an existing parameter
	hasValue bool
	valueKey string
}

type setRef struct {
	name string
	pos  Pos
}

type outputDecl struct {
	name string
	pos  Pos
	of   *fx // nil: the key names a variable or define
	span *valueSpec
	unit *unitSpec
	note string
	when *fx
}

type defineDecl struct {
	name  string
	pos   Pos
	loops *loopsSpec
	is    fx
	unit  *unitSpec
	note  string
	when  *fx
}

type eqDecl struct {
	name     string
	pos      Pos
	loops    *loopsSpec
	lhs, rhs formula.Expr
	eqOff    int
	m        *scalarMap
	when     *fx
}

type axisDecl struct {
	name     string
	pos      Pos
	from, to *valueSpec
	points   int
	log      bool
}

type checkDecl struct {
	name     string
	pos      Pos
	loops    *loopsSpec
	of       fx
	min, max *valueSpec
	unit     *unitSpec
	note     string
	when     *fx
}

// LoadFile reads and loads the model file at path.
func LoadFile(path string) (*File, error) {
	fh, err := os.Open(path)
	if err != nil {
		return nil, err
	}
	defer fh.Close()
	return Load(path, fh)
}

// Load reads a model file and checks its structure: keys, value types, unit
// strings and formula syntax. name is used in messages. The error, when not
// nil, is an ErrorList.
func Load(name string, r io.Reader) (*File, error) {
	data, err := io.ReadAll(io.LimitReader(r, MaxFileSize+1))
	if err != nil {
		return nil, err
	}
	var errs ErrorList
	if len(data) > MaxFileSize {
		errs.Add(Pos{File: name, Line: 1, Col: 1}, "file is larger than %d bytes", MaxFileSize)
		return nil, errs
	}
	l := &loader{f: &File{Name: name, src: newSource(name, data)}}
	l.load(data)
	l.errs.Sort()
	if len(l.errs) > 0 {
		return nil, l.errs
	}
	return l.f, nil
}

type loader struct {
	f    *File
	errs ErrorList
}

func (l *loader) pos(n *yaml.Node) Pos { return l.f.src.pos(n) }

func (l *loader) errorf(n *yaml.Node, format string, args ...any) {
	l.errs.Add(l.pos(n), format, args...)
}

var yamlLine = regexp.MustCompile(`^yaml: line (\d+): (.*)$`)

func (l *loader) load(data []byte) {
	var doc yaml.Node
	dec := yaml.NewDecoder(bytes.NewReader(data))
	err := func() (err error) {
		defer func() {
			if r := recover(); r != nil {
				err = fmt.Errorf("yaml: %v", r)
			}
		}()
		return dec.Decode(&doc)
	}()
	if err == io.EOF {
		l.errs.Add(Pos{File: l.f.Name, Line: 1, Col: 1}, "the file is empty: a model needs at least the keys model, variables and equations")
		return
	}
	if err != nil {
		msg := err.Error()
		line := 1
		if m := yamlLine.FindStringSubmatch(msg); m != nil {
			line, _ = strconv.Atoi(m[1])
			msg = m[2]
			if yamlParserError(msg) {
				// yaml.v3 reports a parser error (not a scanner error)
				// at the 0-based line of the construct it was reading.
				line++
				msg += " (in the construct that starts on this line)"
			}
		} else {
			msg = strings.TrimPrefix(msg, "yaml: ")
		}
		l.errs.Add(Pos{File: l.f.Name, Line: line, Col: 1}, "YAML syntax: %s", msg)
		return
	}
	if !l.checkNodes(&doc, 0) {
		return
	}
	root := &doc
	if root.Kind == yaml.DocumentNode && len(root.Content) == 1 {
		root = root.Content[0]
	}
	if root.Kind != yaml.MappingNode {
		l.errorf(root, "a model file is a mapping with the keys model, variables, equations and others; found %s", kindName(root))
		return
	}
	seen := map[string]*yaml.Node{}
	for i := 0; i+1 < len(root.Content); i += 2 {
		// A misspelt required key is reported as unknown, not also as missing.
		if k := root.Content[i]; k.Kind == yaml.ScalarNode && !contains(topKeys, k.Value) {
			if s := nearest(k.Value, topKeys); s != "" {
				seen[s] = k
			}
		}
	}
	l.mapping(root, topKeys, func(key string, k, v *yaml.Node) {
		seen[key] = k
		switch key {
		case "model":
			l.modelName(v)
		case "about":
			if s, ok := l.str(v, "about"); ok {
				l.f.About = strings.TrimSpace(s)
			}
		case "constants":
			l.constants(v)
		case "sets":
			l.sets(v)
		case "parameters":
			l.symbols(v, kindParameter, "parameters")
		case "variables":
			l.symbols(v, kindVariable, "variables")
		case "inputs":
			l.symbols(v, kindInput, "inputs")
		case "disturbances":
			l.symbols(v, kindDisturbance, "disturbances")
		case "outputs":
			l.outputs(v)
		case "define":
			l.defines(v)
		case "equations":
			l.equations(v)
		case "envelope":
			l.envelope(v)
		case "checks":
			l.checks(v)
		}
	})
	for _, req := range []string{"model", "variables", "equations"} {
		if seen[req] == nil {
			l.errs.Add(Pos{File: l.f.Name, Line: root.Line, Col: root.Column}, "missing key %q: every model needs model, variables and equations", req)
		}
	}
	if len(l.errs) == 0 {
		// Names declared twice without a when condition are wrong whatever
		// the constants; those with conditions are checked at expansion.
		l.errs = append(l.errs, l.f.checkNames(func(w *fx) bool { return w == nil })...)
	}
}

// yamlParserError says whether a yaml.v3 message comes from its parser,
// whose line numbers count from 0, rather than its scanner.
func yamlParserError(msg string) bool {
	for _, p := range []string{"did not find expected <", "did not find expected key", "did not find expected ',' or",
		"did not find expected node content", "did not find expected '-' indicator", "found undefined tag handle",
		"found duplicate %YAML directive", "found incompatible YAML document", "found duplicate %TAG directive"} {
		if strings.HasPrefix(msg, p) {
			return true
		}
	}
	return false
}

const maxYAMLDepth = 64

// checkNodes rejects anchors, aliases and deep nesting before anything
// else looks at the tree.
func (l *loader) checkNodes(n *yaml.Node, depth int) bool {
	if depth > maxYAMLDepth {
		l.errorf(n, "the YAML is nested more than %d levels deep", maxYAMLDepth)
		return false
	}
	if n.Kind == yaml.AliasNode {
		l.errorf(n, "YAML aliases (*name) are not supported in model files; write the value out")
		return false
	}
	if n.Anchor != "" {
		l.errorf(n, "YAML anchors (&name) are not supported in model files")
		return false
	}
	for _, c := range n.Content {
		if !l.checkNodes(c, depth+1) {
			return false
		}
	}
	return true
}

var topKeys = []string{"model", "about", "constants", "sets", "parameters", "variables", "inputs", "outputs", "disturbances", "define", "equations", "envelope", "checks"}

func kindName(n *yaml.Node) string {
	switch n.Kind {
	case yaml.MappingNode:
		return "a mapping"
	case yaml.SequenceNode:
		return "a list"
	case yaml.ScalarNode:
		if n.Tag == "!!null" {
			return "nothing"
		}
		return fmt.Sprintf("%q", n.Value)
	}
	return "something else"
}

// mapping calls f for each key of a mapping, rejecting unknown keys (with
// the nearest known one suggested) and duplicate keys. known == nil accepts
// any key that is a name.
func (l *loader) mapping(n *yaml.Node, known []string, f func(key string, k, v *yaml.Node)) {
	if n.Kind != yaml.MappingNode {
		l.errorf(n, "expected a mapping of keys, found %s", kindName(n))
		return
	}
	seen := map[string]*yaml.Node{}
	for i := 0; i+1 < len(n.Content); i += 2 {
		k, v := n.Content[i], n.Content[i+1]
		if k.Kind != yaml.ScalarNode {
			l.errorf(k, "a key must be a plain name, found %s", kindName(k))
			continue
		}
		key := k.Value
		if prev := seen[key]; prev != nil {
			l.errs.Add(l.pos(k), "duplicate key %q", key)
			l.errs.addNote(l.pos(k), l.pos(prev), "other declaration of %q", key)
			continue
		}
		seen[key] = k
		if known != nil && !contains(known, key) {
			if s := nearest(key, known); s != "" {
				l.errorf(k, "unknown key %q; did you mean %q?", key, s)
			} else {
				l.errorf(k, "unknown key %q; the keys here are %s", key, strings.Join(known, ", "))
			}
			continue
		}
		f(key, k, v)
	}
}

func contains(list []string, s string) bool {
	for _, x := range list {
		if x == s {
			return true
		}
	}
	return false
}

var nameRE = regexp.MustCompile(`^[A-Za-z_][A-Za-z0-9_]*$`)
var modelNameRE = regexp.MustCompile(`^[A-Za-z0-9_-]+$`)

var reserved = map[string]bool{"sum": true, "in": true, "and": true, "or": true, "not": true, "true": true, "false": true, "nil": true, "let": true, "if": true, "else": true}

func (l *loader) name(k *yaml.Node, what string) (string, bool) {
	if !nameRE.MatchString(k.Value) {
		l.errorf(k, "%s name %q is not a name: use letters, digits and _, starting with a letter", what, k.Value)
		return "", false
	}
	if reserved[k.Value] {
		l.errorf(k, "%s name %q is a reserved word; choose another name", what, k.Value)
		return "", false
	}
	if _, ok := formula.Functions[k.Value]; ok {
		l.errorf(k, "%s name %q is the name of a function; choose another name", what, k.Value)
		return "", false
	}
	return k.Value, true
}

func (l *loader) modelName(v *yaml.Node) {
	s, ok := l.str(v, "model")
	if !ok {
		return
	}
	if !modelNameRE.MatchString(s) || len(s) > 128 {
		l.errorf(v, "model name %q: use letters, digits, - and _ only (at most 128)", s)
		return
	}
	l.f.Model = s
	l.f.modelPos = l.pos(v)
}

// str reads a scalar as text.
func (l *loader) str(v *yaml.Node, what string) (string, bool) {
	if v.Kind != yaml.ScalarNode || v.Tag == "!!null" {
		l.errorf(v, "%s must be text, found %s", what, kindName(v))
		return "", false
	}
	return v.Value, true
}

// formulaText reads a scalar holding a formula (a string or a number).
func (l *loader) formulaText(v *yaml.Node, what string) (string, *scalarMap, bool) {
	if v.Kind != yaml.ScalarNode || v.Tag == "!!null" || v.Tag == "!!bool" {
		l.errorf(v, "%s must be a formula, found %s", what, kindName(v))
		return "", nil, false
	}
	return v.Value, l.f.src.scalarMap(v), true
}

func (l *loader) formulaErr(m *scalarMap, err error) {
	if fe, ok := err.(*formula.Error); ok {
		l.errs.Add(m.at(fe.Off), "%s", fe.Msg)
		return
	}
	l.errs.Add(m.at(0), "%v", err)
}

func (l *loader) expr(v *yaml.Node, what string) (*fx, bool) {
	s, m, ok := l.formulaText(v, what)
	if !ok {
		return nil, false
	}
	e, err := formula.ParseExpr(s)
	if err != nil {
		l.formulaErr(m, err)
		return nil, false
	}
	return &fx{e: e, m: m}, true
}

func (l *loader) loops(v *yaml.Node) (*loopsSpec, bool) {
	s, m, ok := l.formulaText(v, "for")
	if !ok {
		return nil, false
	}
	ls, err := formula.ParseFor(s)
	if err != nil {
		if fe, ok := err.(*formula.Error); ok && !strings.Contains(fe.Msg, " in ") {
			fe.Msg += `; a for clause reads "i in SET" or "i in LO..HI", several separated by ","`
		}
		l.formulaErr(m, err)
		return nil, false
	}
	return &loopsSpec{loops: ls, m: m, pos: l.pos(v)}, true
}

func (l *loader) constants(n *yaml.Node) {
	l.mapping(n, nil, func(key string, k, v *yaml.Node) {
		name, ok := l.name(k, "constant")
		if !ok {
			return
		}
		e, ok := l.expr(v, "a constant")
		if !ok {
			return
		}
		l.f.constants = append(l.f.constants, &constDecl{name: name, pos: l.pos(k), val: *e})
	})
}

func (l *loader) sets(n *yaml.Node) {
	l.mapping(n, nil, func(key string, k, v *yaml.Node) {
		name, ok := l.name(k, "set")
		if !ok {
			return
		}
		s, m, ok := l.formulaText(v, "a set")
		if !ok {
			return
		}
		r, err := formula.ParseRange(s)
		if err != nil {
			l.formulaErr(m, err)
			return
		}
		l.f.sets = append(l.f.sets, &setDecl{name: name, pos: l.pos(k), rng: r, m: m})
	})
}

var symKeys = map[symKind][]string{
	kindParameter:   {"value", "unit", "over", "note", "when"},
	kindVariable:    {"guess", "unit", "min", "max", "over", "note", "when"},
	kindInput:       {"value", "unit", "min", "max", "span", "over", "note", "when"},
	kindDisturbance: {"value", "unit", "min", "max", "span", "over", "note", "when"},
}

func (l *loader) symbols(n *yaml.Node, kind symKind, section string) {
	l.mapping(n, nil, func(key string, k, v *yaml.Node) {
		name, ok := l.name(k, kind.String())
		if !ok {
			return
		}
		d := &symDecl{kind: kind, name: name, pos: l.pos(k), section: section, roleOnly: kind == kindInput || kind == kindDisturbance}
		valueKey := "value"
		if kind == kindVariable {
			valueKey = "guess"
		}
		d.valueKey = valueKey
		if v.Kind != yaml.MappingNode {
			// Short form: name: <value> (a guess for variables).
			if v.Kind == yaml.ScalarNode && v.Tag == "!!null" && kind != kindParameter {
				l.f.symbols = append(l.f.symbols, d)
				return
			}
			d.value = l.value(v, valueKey, true)
			d.hasValue = true
			if d.value != nil {
				l.f.symbols = append(l.f.symbols, d)
			}
			return
		}
		bad := false
		l.mapping(v, symKeys[kind], func(key string, k, v *yaml.Node) {
			var val *valueSpec
			switch key {
			case "value", "guess", "min", "max", "span":
				val = l.value(v, key, key == "value" || key == "guess")
				if val == nil {
					bad = true
				}
			}
			switch key {
			case "value", "guess":
				d.value, d.hasValue = val, true
			case "min":
				d.min = val
			case "max":
				d.max = val
			case "span":
				d.span = val
			case "unit":
				d.unit = l.unit(v)
				bad = bad || d.unit == nil
			case "over":
				d.over = l.over(v)
				bad = bad || d.over == nil
			case "note":
				d.note, _ = l.str(v, "note")
			case "when":
				d.when, _ = l.expr(v, "when")
				bad = bad || d.when == nil
			}
		})
		if kind == kindParameter && !d.hasValue {
			l.errorf(k, "parameter %q needs a value: write %s: <number> or %s: {value: <number>, unit: ...}", name, name, name)
			return
		}
		if !bad {
			l.f.symbols = append(l.f.symbols, d)
		}
	})
}

func (l *loader) over(v *yaml.Node) []setRef {
	var out []setRef
	add := func(n *yaml.Node) bool {
		if n.Kind != yaml.ScalarNode || !nameRE.MatchString(n.Value) {
			l.errorf(n, "over takes a set name or a list of set names, found %s", kindName(n))
			return false
		}
		out = append(out, setRef{name: n.Value, pos: l.pos(n)})
		return true
	}
	switch v.Kind {
	case yaml.ScalarNode:
		if !add(v) {
			return nil
		}
	case yaml.SequenceNode:
		if len(v.Content) == 0 {
			l.errorf(v, "over needs at least one set name")
			return nil
		}
		for _, c := range v.Content {
			if !add(c) {
				return nil
			}
		}
	default:
		l.errorf(v, "over takes a set name or a list of set names, found %s", kindName(v))
		return nil
	}
	return out
}

func (l *loader) unit(v *yaml.Node) *unitSpec {
	s, ok := l.str(v, "unit")
	if !ok {
		return nil
	}
	u, err := units.Parse(s)
	if err != nil {
		l.unitErr(v, 0, err)
		return nil
	}
	return &unitSpec{text: s, u: u, pos: l.pos(v)}
}

// unitErr reports a unit error at its column inside the scalar, shifted by
// off runes (the start of the unit text in the scalar).
func (l *loader) unitErr(v *yaml.Node, off int, err error) {
	if ue, ok := err.(*units.Error); ok {
		col := ue.Col - 1
		if col < 0 {
			col = 0
		}
		l.errs.Add(l.f.src.scalarMap(v).at(off+col), "bad unit %q: %s", ue.Input, ue.Msg)
		return
	}
	l.errorf(v, "bad unit: %v", err)
}

// value reads a number, a "<number> <unit>" string, or (when lists are
// allowed) a list of those, one per member of an indexed family.
func (l *loader) value(v *yaml.Node, what string, allowList bool) *valueSpec {
	switch v.Kind {
	case yaml.SequenceNode:
		if !allowList {
			l.errorf(v, "%s takes one number, found a list", what)
			return nil
		}
		vs := &valueSpec{pos: l.pos(v), isList: true}
		for _, c := range v.Content {
			e := l.value(c, what, false)
			if e == nil {
				return nil
			}
			vs.list = append(vs.list, e)
		}
		if len(vs.list) == 0 {
			l.errorf(v, "%s: the list is empty", what)
			return nil
		}
		return vs
	case yaml.ScalarNode:
	default:
		l.errorf(v, "%s must be a number or \"<number> <unit>\", found %s", what, kindName(v))
		return nil
	}
	if v.Tag == "!!int" || v.Tag == "!!float" {
		var f float64
		if err := v.Decode(&f); err != nil || math.IsInf(f, 0) || math.IsNaN(f) {
			l.errorf(v, "%s: %q is not a finite number", what, v.Value)
			return nil
		}
		return &valueSpec{pos: l.pos(v), num: f}
	}
	if v.Tag != "!!str" {
		l.errorf(v, "%s must be a number or \"<number> <unit>\", found %s", what, kindName(v))
		return nil
	}
	return l.quantity(v, v.Value, what)
}

func (l *loader) quantity(v *yaml.Node, s, what string) *valueSpec {
	num, u, hasUnit, err := units.ParseQuantity(s)
	if err != nil {
		if ue, ok := err.(*units.Error); ok && hasUnitPart(s) {
			l.unitErr(v, unitStart(s), ue)
			return nil
		}
		l.errorf(v, "%s: %q is not a number or \"<number> <unit>\"", what, s)
		return nil
	}
	if math.IsInf(num, 0) || math.IsNaN(num) {
		l.errorf(v, "%s: %q is not a finite number", what, s)
		return nil
	}
	vs := &valueSpec{pos: l.pos(v), num: num}
	if hasUnit {
		vs.unit = &u
		vs.unitTxt = u.Text
	}
	return vs
}

// hasUnitPart says whether s starts with a number followed by more text.
func hasUnitPart(s string) bool {
	t := strings.TrimSpace(s)
	i := strings.IndexAny(t, " \t")
	if i < 0 {
		return false
	}
	_, err := strconv.ParseFloat(t[:i], 64)
	return err == nil
}

// unitStart is the rune offset of the unit text in "<number> <unit>".
func unitStart(s string) int {
	rs := []rune(s)
	i := 0
	for i < len(rs) && (rs[i] == ' ' || rs[i] == '\t') {
		i++
	}
	for i < len(rs) && rs[i] != ' ' && rs[i] != '\t' {
		i++
	}
	for i < len(rs) && (rs[i] == ' ' || rs[i] == '\t') {
		i++
	}
	return i
}

var outputKeys = []string{"of", "span", "unit", "note", "when"}

func (l *loader) outputs(n *yaml.Node) {
	l.mapping(n, nil, func(key string, k, v *yaml.Node) {
		d := &outputDecl{name: key, pos: l.pos(k)}
		if !nameRE.MatchString(key) {
			// An indexed name such as x[NT] is an expression.
			e, err := formula.ParseExpr(key)
			if _, isIdx := e.(*formula.Index); err != nil || !isIdx {
				l.errorf(k, "output %q: an output key is a name, or an indexed name such as x[NT]", key)
				return
			}
			d.of = &fx{e: e, m: l.f.src.scalarMap(k)}
		}
		bad := false
		switch {
		case v.Kind == yaml.ScalarNode && v.Tag == "!!null":
		case v.Kind == yaml.MappingNode:
			l.mapping(v, outputKeys, func(key string, k, v *yaml.Node) {
				switch key {
				case "of":
					d.of, _ = l.expr(v, "of")
					bad = bad || d.of == nil
				case "span":
					d.span = l.value(v, "span", false)
					bad = bad || d.span == nil
				case "unit":
					d.unit = l.unit(v)
					bad = bad || d.unit == nil
				case "note":
					d.note, _ = l.str(v, "note")
				case "when":
					d.when, _ = l.expr(v, "when")
					bad = bad || d.when == nil
				}
			})
		default:
			l.errorf(v, "output %q takes a mapping such as {span: 0.01} or {of: \"x[NT]\", span: 0.01}, found %s", key, kindName(v))
			return
		}
		if !bad {
			l.f.outputs = append(l.f.outputs, d)
		}
	})
}

var defineKeys = []string{"is", "for", "unit", "note", "when"}

func (l *loader) defines(n *yaml.Node) {
	l.mapping(n, nil, func(key string, k, v *yaml.Node) {
		name, ok := l.name(k, "define")
		if !ok {
			return
		}
		d := &defineDecl{name: name, pos: l.pos(k)}
		if v.Kind != yaml.MappingNode {
			e, ok := l.expr(v, "a define")
			if ok {
				d.is = *e
				l.f.defines = append(l.f.defines, d)
			}
			return
		}
		bad, hasIs := false, false
		l.mapping(v, defineKeys, func(key string, kk, v *yaml.Node) {
			switch key {
			case "is":
				e, ok := l.expr(v, "is")
				if ok {
					d.is, hasIs = *e, true
				}
				bad = bad || !ok
			case "for":
				d.loops, _ = l.loops(v)
				bad = bad || d.loops == nil
			case "unit":
				d.unit = l.unit(v)
				bad = bad || d.unit == nil
			case "note":
				d.note, _ = l.str(v, "note")
			case "when":
				d.when, _ = l.expr(v, "when")
				bad = bad || d.when == nil
			}
		})
		if !hasIs && !bad {
			l.errorf(k, "define %q needs is: \"<expression>\"", name)
			return
		}
		if !bad {
			l.f.defines = append(l.f.defines, d)
		}
	})
}

var equationKeys = []string{"eq", "for", "when", "note"}

func (l *loader) equations(n *yaml.Node) {
	l.mapping(n, nil, func(key string, k, v *yaml.Node) {
		name, ok := l.name(k, "equation")
		if !ok {
			return
		}
		d := &eqDecl{name: name, pos: l.pos(k)}
		eqNode := v
		if v.Kind == yaml.MappingNode {
			eqNode = nil
			bad := false
			l.mapping(v, equationKeys, func(key string, kk, v *yaml.Node) {
				switch key {
				case "eq":
					eqNode = v
				case "for":
					d.loops, _ = l.loops(v)
					bad = bad || d.loops == nil
				case "when":
					d.when, _ = l.expr(v, "when")
					bad = bad || d.when == nil
				case "note":
					l.str(v, "note")
				}
			})
			if bad {
				return
			}
			if eqNode == nil {
				l.errorf(k, "equation %q needs eq: \"lhs = rhs\"", name)
				return
			}
		}
		s, m, ok := l.formulaText(eqNode, "an equation")
		if !ok {
			return
		}
		lhs, rhs, eq, err := formula.ParseEquation(s)
		if err != nil {
			l.formulaErr(m, err)
			return
		}
		d.lhs, d.rhs, d.eqOff, d.m = lhs, rhs, eq, m
		l.f.equations = append(l.f.equations, d)
	})
}

var axisKeys = []string{"from", "to", "points", "spacing"}

func (l *loader) envelope(n *yaml.Node) {
	l.mapping(n, nil, func(key string, k, v *yaml.Node) {
		d := &axisDecl{name: key, pos: l.pos(k), points: 11}
		bad := false
		l.mapping(v, axisKeys, func(key string, kk, v *yaml.Node) {
			switch key {
			case "from":
				d.from = l.value(v, "from", false)
				bad = bad || d.from == nil
			case "to":
				d.to = l.value(v, "to", false)
				bad = bad || d.to == nil
			case "points":
				var p int
				if v.Kind != yaml.ScalarNode || v.Tag != "!!int" || v.Decode(&p) != nil || p < 2 || p > 100000 {
					l.errorf(v, "points must be a whole number from 2 to 100000, found %s", kindName(v))
					bad = true
				}
				d.points = p
			case "spacing":
				s, _ := l.str(v, "spacing")
				switch s {
				case "log":
					d.log = true
				case "linear":
				default:
					l.errorf(v, "spacing is linear or log, found %q", s)
					bad = true
				}
			}
		})
		if v.Kind != yaml.MappingNode {
			return
		}
		if !bad && (d.from == nil || d.to == nil) {
			l.errorf(k, "envelope axis %q needs from and to", key)
			return
		}
		if !bad {
			l.f.envelope = append(l.f.envelope, d)
		}
	})
}

var checkKeys = []string{"of", "for", "min", "max", "unit", "note", "when"}

func (l *loader) checks(n *yaml.Node) {
	l.mapping(n, nil, func(key string, k, v *yaml.Node) {
		name, ok := l.name(k, "check")
		if !ok {
			return
		}
		d := &checkDecl{name: name, pos: l.pos(k)}
		bad, hasOf := false, false
		l.mapping(v, checkKeys, func(key string, kk, v *yaml.Node) {
			switch key {
			case "of":
				e, ok := l.expr(v, "of")
				if ok {
					d.of, hasOf = *e, true
				}
				bad = bad || !ok
			case "for":
				d.loops, _ = l.loops(v)
				bad = bad || d.loops == nil
			case "min":
				d.min = l.value(v, "min", false)
				bad = bad || d.min == nil
			case "max":
				d.max = l.value(v, "max", false)
				bad = bad || d.max == nil
			case "unit":
				d.unit = l.unit(v)
				bad = bad || d.unit == nil
			case "note":
				d.note, _ = l.str(v, "note")
			case "when":
				d.when, _ = l.expr(v, "when")
				bad = bad || d.when == nil
			}
		})
		if v.Kind != yaml.MappingNode || bad {
			return
		}
		if !hasOf {
			l.errorf(k, "check %q needs of: \"<expression>\"", name)
			return
		}
		if d.min == nil && d.max == nil {
			l.errorf(k, "check %q needs min, max or both", name)
			return
		}
		l.f.checks = append(l.f.checks, d)
	})
}

// decl is one entry of the shared namespace.
type decl struct {
	name string
	what string
	pos  Pos
	when *fx
}

// declarations lists the entries of the shared namespace (constants, sets,
// parameters, variables, new inputs and disturbances, defines), and the
// equations' own namespace.
func (f *File) declarations() (names, eqs []decl) {
	for _, c := range f.constants {
		names = append(names, decl{c.name, "constant", c.pos, nil})
	}
	for _, s := range f.sets {
		names = append(names, decl{s.name, "set", s.pos, nil})
	}
	for _, s := range f.symbols {
		if s.roleOnly {
			continue // checked once roles are resolved
		}
		names = append(names, decl{s.name, s.kind.String(), s.pos, s.when})
	}
	for _, d := range f.defines {
		names = append(names, decl{d.name, "define", d.pos, d.when})
	}
	for _, e := range f.equations {
		eqs = append(eqs, decl{e.name, "equation", e.pos, e.when})
	}
	return names, eqs
}

// checkNames reports names declared twice among the entries that active
// says exist.
func (f *File) checkNames(active func(*fx) bool) ErrorList {
	var errs ErrorList
	names, eqs := f.declarations()
	check := func(list []decl) {
		first := map[string]decl{}
		for _, d := range list {
			if !active(d.when) {
				continue
			}
			if p, ok := first[d.name]; ok {
				errs.Add(d.pos, "%s %q is already declared as a %s", d.what, d.name, p.what)
				errs.addNote(d.pos, p.pos, "other declaration of %q", d.name)
				continue
			}
			first[d.name] = d
		}
	}
	check(names)
	check(eqs)
	return errs
}

// nearest returns the candidate closest to s by edit distance, or "" when
// none is close enough to be a likely typo.
func nearest(s string, candidates []string) string {
	best, bestD := "", 1<<30
	for _, c := range candidates {
		d := editDistance(strings.ToLower(s), strings.ToLower(c))
		if d < bestD || (d == bestD && c < best) {
			best, bestD = c, d
		}
	}
	limit := len(s) / 3
	if limit < 1 {
		limit = 1
	}
	if limit > 3 {
		limit = 3
	}
	if bestD > limit {
		return ""
	}
	return best
}

// editDistance is the optimal-string-alignment distance: insertions,
// deletions, substitutions and swaps of neighbours each count one.
func editDistance(a, b string) int {
	ra, rb := []rune(a), []rune(b)
	if len(ra) > 64 || len(rb) > 64 {
		if a == b {
			return 0
		}
		return 1 << 20
	}
	d := make([][]int, len(ra)+1)
	for i := range d {
		d[i] = make([]int, len(rb)+1)
		d[i][0] = i
	}
	for j := range d[0] {
		d[0][j] = j
	}
	for i := 1; i <= len(ra); i++ {
		for j := 1; j <= len(rb); j++ {
			c := 1
			if ra[i-1] == rb[j-1] {
				c = 0
			}
			d[i][j] = min(d[i-1][j]+1, d[i][j-1]+1, d[i-1][j-1]+c)
			if i > 1 && j > 1 && ra[i-1] == rb[j-2] && ra[i-2] == rb[j-1] {
				d[i][j] = min(d[i][j], d[i-2][j-2]+1)
			}
		}
	}
	return d[len(ra)][len(rb)]
}

func sortedKeys[M ~map[string]V, V any](m M) []string {
	out := make([]string, 0, len(m))
	for k := range m {
		out = append(out, k)
	}
	sort.Strings(out)
	return out
}
