// Package render turns results into what people and scripts read: aligned
// terminal tables with units in the headers, numbers with sensible
// significant digits, CSV, and deterministic JSON.
package render

import (
	"encoding/csv"
	"encoding/json"
	"fmt"
	"io"
	"math"
	"strconv"
	"strings"
	"unicode/utf8"
)

// Format is an output format chosen with --format.
type Format string

const (
	Table Format = "table"
	JSON  Format = "json"
	CSV   Format = "csv"
)

// ParseFormat checks a --format value against the allowed ones.
func ParseFormat(s string, allowed ...Format) (Format, error) {
	for _, f := range allowed {
		if string(f) == s {
			return f, nil
		}
	}
	names := make([]string, len(allowed))
	for i, f := range allowed {
		names[i] = string(f)
	}
	return "", fmt.Errorf("unknown format %q: use one of %s", s, strings.Join(names, ", "))
}

// Num formats a number with sig significant digits, without exponent for
// ordinary magnitudes, and "-" for NaN.
func Num(v float64, sig int) string {
	switch {
	case math.IsNaN(v):
		return "-"
	case math.IsInf(v, 1):
		return "inf"
	case math.IsInf(v, -1):
		return "-inf"
	case v == 0:
		return "0"
	}
	a := math.Abs(v)
	if a >= 1e-4 && a < 1e9 {
		digits := sig - 1 - int(math.Floor(math.Log10(a)))
		if digits < 0 {
			digits = 0
		}
		s := strconv.FormatFloat(v, 'f', digits, 64)
		if strings.Contains(s, ".") {
			s = strings.TrimRight(strings.TrimRight(s, "0"), ".")
		}
		return s
	}
	return strconv.FormatFloat(v, 'g', sig, 64)
}

// Header builds a column header with a unit: "flow [kg/h]"; no brackets
// when the unit is empty.
func Header(name, unit string) string {
	if unit == "" {
		return name
	}
	return name + " [" + unit + "]"
}

// Align says how a table column is aligned.
type Align int

const (
	Left Align = iota
	Right
)

// TableData is a table to print: a title, headers, rows of cells, and the
// alignment of each column (numbers right, names left).
type TableData struct {
	Title   string
	Headers []string
	Align   []Align
	Rows    [][]string
	Notes   []string // printed under the table
}

// Write prints t as an aligned text table.
func (t *TableData) Write(w io.Writer) error {
	n := len(t.Headers)
	width := make([]int, n)
	for j, h := range t.Headers {
		width[j] = utf8.RuneCountInString(h)
	}
	for _, r := range t.Rows {
		for j := 0; j < n && j < len(r); j++ {
			if l := utf8.RuneCountInString(r[j]); l > width[j] {
				width[j] = l
			}
		}
	}
	var b strings.Builder
	if t.Title != "" {
		b.WriteString(t.Title)
		b.WriteString("\n")
	}
	line := func(cells []string) {
		for j := 0; j < n; j++ {
			c := ""
			if j < len(cells) {
				c = cells[j]
			}
			pad := strings.Repeat(" ", width[j]-utf8.RuneCountInString(c))
			if j > 0 {
				b.WriteString("  ")
			}
			if j < len(t.Align) && t.Align[j] == Right {
				b.WriteString(pad + c)
			} else if j == n-1 {
				b.WriteString(c)
			} else {
				b.WriteString(c + pad)
			}
		}
		b.WriteString("\n")
	}
	line(t.Headers)
	rule := make([]string, n)
	for j := range rule {
		rule[j] = strings.Repeat("-", width[j])
	}
	line(rule)
	for _, r := range t.Rows {
		line(r)
	}
	for _, note := range t.Notes {
		b.WriteString(note)
		b.WriteString("\n")
	}
	_, err := io.WriteString(w, b.String())
	return err
}

// WriteCSV prints t as CSV: the header row, then the rows.
func (t *TableData) WriteCSV(w io.Writer) error {
	cw := csv.NewWriter(w)
	if err := cw.Write(t.Headers); err != nil {
		return err
	}
	if err := cw.WriteAll(t.Rows); err != nil {
		return err
	}
	cw.Flush()
	return cw.Error()
}

// WriteJSON prints v as indented JSON followed by a newline. Map keys come
// out sorted, so the bytes are deterministic.
func WriteJSON(w io.Writer, v any) error {
	enc := json.NewEncoder(w)
	enc.SetIndent("", "  ")
	enc.SetEscapeHTML(false)
	return enc.Encode(v)
}

// Float is a float64 that marshals NaN and infinities as JSON null, so a
// result with an undefined measure is still valid JSON.
type Float float64

// MarshalJSON implements json.Marshaler.
func (f Float) MarshalJSON() ([]byte, error) {
	v := float64(f)
	if math.IsNaN(v) || math.IsInf(v, 0) {
		return []byte("null"), nil
	}
	return strconv.AppendFloat(nil, v, 'g', -1, 64), nil
}

// Floats converts a slice for JSON.
func Floats(v []float64) []Float {
	out := make([]Float, len(v))
	for i, x := range v {
		out[i] = Float(x)
	}
	return out
}

// Wrap breaks text into lines of at most width runes at spaces, each
// prefixed by indent.
func Wrap(text string, width int, indent string) string {
	words := strings.Fields(text)
	var b strings.Builder
	col := 0
	for i, w := range words {
		l := utf8.RuneCountInString(w)
		if i == 0 {
			b.WriteString(indent + w)
			col = utf8.RuneCountInString(indent) + l
			continue
		}
		if col+1+l > width {
			b.WriteString("\n" + indent + w)
			col = utf8.RuneCountInString(indent) + l
			continue
		}
		b.WriteString(" " + w)
		col += 1 + l
	}
	return b.String()
}

// Colour wraps s in an ANSI colour when on is true. code is an SGR number
// (1 bold, 31 red, 32 green, 33 yellow).
func Colour(on bool, code int, s string) string {
	if !on {
		return s
	}
	return "\x1b[" + strconv.Itoa(code) + "m" + s + "\x1b[0m"
}
