package model

import (
	"strings"

	"gopkg.in/yaml.v3"
)

// source is the raw text of a model file, kept to map positions inside
// scalars (formulas, unit strings) back to file lines and columns.
type source struct {
	name  string
	lines [][]rune // the file's lines without their newlines
}

func newSource(name string, data []byte) *source {
	text := strings.ReplaceAll(string(data), "\r\n", "\n")
	s := &source{name: name}
	for _, l := range strings.Split(text, "\n") {
		s.lines = append(s.lines, []rune(l))
	}
	return s
}

// pos is the position of a YAML node.
func (s *source) pos(n *yaml.Node) Pos {
	if n == nil {
		return Pos{File: s.name}
	}
	return Pos{File: s.name, Line: n.Line, Col: n.Column}
}

// scalarMap maps rune offsets in a scalar's value to file positions. It
// walks the value and the raw text together: raw characters that the value
// does not have (quotes, escapes, folded line breaks, block indentation)
// are skipped. The result is exact for plain and quoted scalars on one
// line and right to the line for folded, quoted and block scalars over
// several lines.
type scalarMap struct {
	pos []Pos // one per rune of the value, plus one past the end
}

func (s *source) scalarMap(n *yaml.Node) *scalarMap {
	val := []rune(n.Value)
	m := &scalarMap{pos: make([]Pos, 0, len(val)+1)}
	line, col := n.Line-1, n.Column-1 // 0-based into s.lines
	switch n.Style {
	case yaml.SingleQuotedStyle, yaml.DoubleQuotedStyle:
		col++
	case yaml.LiteralStyle, yaml.FoldedStyle:
		line, col = line+1, 0
	}
	valid := func() bool { return line >= 0 && line < len(s.lines) }
	at := func() Pos { return Pos{File: s.name, Line: line + 1, Col: col + 1} }
	advance := func() {
		if !valid() {
			return
		}
		col++
		if col > len(s.lines[line]) {
			line, col = line+1, 0
		}
	}
	cur := func() (rune, bool) {
		if !valid() {
			return 0, false
		}
		if col >= len(s.lines[line]) {
			return '\n', true
		}
		return s.lines[line][col], true
	}
	quoted := n.Style == yaml.SingleQuotedStyle || n.Style == yaml.DoubleQuotedStyle
	for _, v := range val {
		for steps := 0; ; steps++ {
			r, ok := cur()
			if !ok || steps > 256 {
				m.pos = append(m.pos, at())
				break
			}
			if r == v {
				m.pos = append(m.pos, at())
				advance()
				break
			}
			skippable := r == ' ' || r == '\t' || r == '\n' || (quoted && (r == '\\' || r == '\'' || r == '"'))
			if !skippable {
				// An escape such as \n or \t in a double-quoted scalar:
				// the value's rune has no raw twin; take this spot.
				m.pos = append(m.pos, at())
				advance()
				break
			}
			advance()
		}
	}
	m.pos = append(m.pos, at())
	return m
}

// at is the file position of rune offset off in the value.
func (m *scalarMap) at(off int) Pos {
	if off < 0 {
		off = 0
	}
	if off >= len(m.pos) {
		off = len(m.pos) - 1
	}
	return m.pos[off]
}
