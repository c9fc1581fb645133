package library

import (
	"errors"
	"fmt"
	"strconv"
	"strings"
	"unicode"

	"github.com/expr-lang/expr"
	"gopkg.in/yaml.v3"
)

// summarise fills e's Summary, Inputs and Outputs from the raw YAML of a
// template. It reads only the top-level keys it needs (about, constants,
// inputs, outputs), so a listing stays cheap and does not depend on the
// whole model being valid. Entries with a `when:` condition are kept when
// the condition holds for the file's default constants (or cannot be
// decided here).
func summarise(e *Entry, data []byte) error {
	var doc yaml.Node
	if err := yaml.Unmarshal(data, &doc); err != nil {
		return fmt.Errorf("not valid YAML: %w", err)
	}
	if doc.Kind != yaml.DocumentNode || len(doc.Content) == 0 || doc.Content[0].Kind != yaml.MappingNode {
		return errors.New("not a model file: the top level must be a mapping with model, variables and equations")
	}
	top := doc.Content[0]
	consts := map[string]any{}
	if c := mapValue(top, "constants"); c != nil && c.Kind == yaml.MappingNode {
		for i := 0; i+1 < len(c.Content); i += 2 {
			if v, err := strconv.ParseFloat(c.Content[i+1].Value, 64); err == nil {
				consts[c.Content[i].Value] = v
			}
		}
	}
	if a := mapValue(top, "about"); a != nil && a.Kind == yaml.ScalarNode {
		e.Summary = FirstSentence(a.Value)
	}
	e.Inputs = activeKeys(mapValue(top, "inputs"), consts)
	e.Outputs = activeKeys(mapValue(top, "outputs"), consts)
	return nil
}

// mapValue returns the value node of key in mapping m, or nil.
func mapValue(m *yaml.Node, key string) *yaml.Node {
	if m == nil || m.Kind != yaml.MappingNode {
		return nil
	}
	for i := 0; i+1 < len(m.Content); i += 2 {
		if m.Content[i].Value == key {
			return m.Content[i+1]
		}
	}
	return nil
}

// activeKeys lists the keys of a symbol section whose `when:` condition (if
// any) holds for consts.
func activeKeys(m *yaml.Node, consts map[string]any) []string {
	if m == nil || m.Kind != yaml.MappingNode {
		return nil
	}
	var keys []string
	for i := 0; i+1 < len(m.Content); i += 2 {
		if w := mapValue(m.Content[i+1], "when"); w != nil && !holds(w.Value, consts) {
			continue
		}
		keys = append(keys, m.Content[i].Value)
	}
	return keys
}

// holds evaluates a `when:` condition on constants. It answers true when
// the condition cannot be evaluated here: the model loader reports bad
// conditions with their positions, and a listing should not hide entries.
// The environment holds only numbers, so the expression can reach nothing
// but them.
func holds(cond string, consts map[string]any) bool {
	v, err := expr.Eval(cond, consts)
	if err != nil {
		return true
	}
	b, ok := v.(bool)
	return !ok || b
}

// FirstSentence returns the first sentence of a paragraph, with runs of
// white space collapsed: the text up to the first '.', '!' or '?' outside
// parentheses that is followed by white space and a capital letter or
// digit, or by the end.
func FirstSentence(text string) string {
	text = strings.Join(strings.Fields(text), " ")
	r := []rune(text)
	depth := 0
	for i, c := range r {
		switch c {
		case '(':
			depth++
			continue
		case ')':
			depth = max(depth-1, 0)
			continue
		case '.', '!', '?':
			if depth > 0 {
				continue
			}
		default:
			continue
		}
		if i+1 == len(r) {
			return text
		}
		if r[i+1] == ' ' && i+2 < len(r) && (unicode.IsUpper(r[i+2]) || unicode.IsDigit(r[i+2])) {
			return string(r[:i+1])
		}
	}
	return text
}
