// Package gainfile reads measured steady-state gain matrices, such as those
// from plant step tests, into an interact.GainSet. Two forms are accepted:
//
// CSV: the first row holds the input names, the first column the output
// names, the top-left cell is free text (or empty), every other cell is a
// gain in output units per input unit. Lines starting with # are comments. A
// name may carry its unit in brackets: "xD [wt%]".
//
//	# Wood & Berry (1973) column, steady-state gains
//	gain,     R [lb/min], S [lb/min]
//	xD [wt%], 12.8,       -18.9
//	xB [wt%], 6.6,        -19.4
//
// YAML: outputs, inputs and optional disturbances as maps from name to
// {unit, span, nominal} (all optional, spans and nominals in the signal's
// unit), the gain matrix as a list of rows, and disturbance_gain when there
// are disturbances:
//
//	about: invented three-tank example
//	outputs:
//	  T: {unit: degC, span: 10}
//	inputs:
//	  steam: {unit: kg/h, span: 200, nominal: 1000}
//	disturbances:
//	  feed: {unit: kg/h, span: 500}
//	gain: [[0.05]]
//	disturbance_gain: [[-0.01]]
//
// Errors carry file:line:col and say what to change.
package gainfile

import (
	"encoding/csv"
	"errors"
	"io"
	"math"
	"os"
	"path/filepath"
	"strconv"
	"strings"

	"github.com/loopwright/loopwright/interact"
	"gonum.org/v1/gonum/mat"
)

// Load reads a gain file, choosing the form by extension: .csv, or .yaml and
// .yml.
func Load(path string) (*interact.GainSet, error) {
	f, err := os.Open(path)
	if err != nil {
		return nil, err
	}
	defer f.Close()
	return Read(path, f)
}

// Read reads a gain file named name from r, choosing the form by the name's
// extension.
func Read(name string, r io.Reader) (*interact.GainSet, error) {
	switch strings.ToLower(filepath.Ext(name)) {
	case ".csv":
		return ReadCSV(name, r)
	case ".yaml", ".yml":
		return ReadYAML(name, r)
	}
	return nil, &Error{File: name, Msg: "unknown gain file type: name it .csv or .yaml"}
}

// ReadCSV reads the CSV form. name is used in messages and as the GainSet's
// Source.
func ReadCSV(name string, r io.Reader) (*interact.GainSet, error) {
	c := &collector{file: name}
	cr := csv.NewReader(r)
	cr.Comment = '#'
	cr.FieldsPerRecord = -1
	cr.TrimLeadingSpace = true
	cr.ReuseRecord = false

	g := &interact.GainSet{Source: name}
	var rows [][]float64
	header := true
	var width, headerLine int
	outSeen := map[string]int{}
	for !c.full() {
		rec, err := cr.Read()
		if err == io.EOF {
			break
		}
		if err != nil {
			var pe *csv.ParseError
			if errors.As(err, &pe) {
				if pe.StartLine != 0 && pe.StartLine != pe.Line {
					c.add(pe.StartLine, 0, "%v: a quoted field starting on this line runs to line %d; check its quotes", pe.Err, pe.Line)
				} else {
					c.add(pe.Line, pe.Column, "%v: check the quotes in this line", pe.Err)
				}
			} else {
				c.add(0, 0, "%v", err)
			}
			break
		}
		line, _ := cr.FieldPos(0)
		if blank(rec) {
			continue
		}
		if header {
			header, headerLine, width = false, line, len(rec)
			if len(rec) < 2 {
				c.add(line, 1, "the first row must list the input names after the first cell, separated by commas")
				break
			}
			inSeen := map[string]int{}
			for j, cell := range rec[1:] {
				l, col := cr.FieldPos(j + 1)
				s, ok := parseName(c, cell, l, col, "input", inSeen)
				if ok {
					g.Inputs = append(g.Inputs, s)
				}
			}
			continue
		}
		l0, c0 := cr.FieldPos(0)
		if len(rec) != width {
			c.add(l0, c0, "this row has %d cells but the first row has %d: give every output one gain per input", len(rec), width)
			continue
		}
		s, _ := parseName(c, rec[0], l0, c0, "output", outSeen)
		g.Outputs = append(g.Outputs, s)
		row := make([]float64, width-1)
		for j, cell := range rec[1:] {
			l, col := cr.FieldPos(j + 1)
			row[j] = parseGain(c, cell, l, col)
		}
		rows = append(rows, row)
	}
	if len(c.errs) == 0 {
		switch {
		case header:
			c.add(1, 1, "the file holds no gain matrix: write a row of input names, then one row per output")
		case len(rows) == 0:
			c.add(headerLine, 1, "no output rows after the input names: add one row per output, name first, then its gains")
		}
	}
	if err := c.errs.Err(); err != nil {
		return nil, err
	}
	g.K = mat.NewDense(len(rows), len(g.Inputs), nil)
	for i, row := range rows {
		g.K.SetRow(i, row)
	}
	return g, nil
}

func blank(rec []string) bool {
	for _, s := range rec {
		if strings.TrimSpace(s) != "" {
			return false
		}
	}
	return true
}

// parseName reads "name" or "name [unit]".
func parseName(c *collector, cell string, line, col int, role string, seen map[string]int) (interact.Signal, bool) {
	cell = strings.TrimSpace(cell)
	s := interact.Signal{Name: cell}
	if i := strings.IndexByte(cell, '['); i >= 0 {
		if !strings.HasSuffix(cell, "]") {
			c.add(line, col+i, "unit of %s %q has no closing ]: write it as name [unit]", role, cell)
			return s, false
		}
		s.Name = strings.TrimSpace(cell[:i])
		s.Unit = strings.TrimSpace(cell[i+1 : len(cell)-1])
	}
	if s.Name == "" {
		c.add(line, col, "empty %s name: name every %s", role, role)
		return s, false
	}
	if prev, dup := seen[s.Name]; dup {
		c.add(line, col, "duplicate %s name %q (first on line %d): give each %s its own name", role, s.Name, prev, role)
		return s, false
	}
	seen[s.Name] = line
	return s, true
}

func parseGain(c *collector, cell string, line, col int) float64 {
	t := strings.TrimSpace(cell)
	v, err := strconv.ParseFloat(t, 64)
	switch {
	case t == "":
		c.add(line, col, "empty gain: write 0 if the input does not move this output")
	case err != nil:
		c.add(line, col, "%q is not a number: write the gain as a decimal number such as -18.9 or 1.2e-3", t)
	case math.IsNaN(v) || math.IsInf(v, 0):
		c.add(line, col, "gain %q is not finite: write a finite number", t)
	}
	return v
}
