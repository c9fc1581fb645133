package gainfile

import (
	"errors"
	"io"
	"math"
	"regexp"
	"strconv"
	"strings"

	"github.com/loopwright/loopwright/interact"
	"gonum.org/v1/gonum/mat"
	"gopkg.in/yaml.v3"
)

var yamlLine = regexp.MustCompile(`line (\d+)`)

// ReadYAML reads the YAML form. name is used in messages and as the
// GainSet's Source.
func ReadYAML(name string, r io.Reader) (*interact.GainSet, error) {
	c := &collector{file: name}
	var doc yaml.Node
	dec := yaml.NewDecoder(r)
	if err := dec.Decode(&doc); err != nil {
		if errors.Is(err, io.EOF) {
			c.add(1, 1, "the file is empty: give outputs, inputs and gain")
			return nil, c.errs.Err()
		}
		line := 0
		if m := yamlLine.FindStringSubmatch(err.Error()); m != nil {
			line, _ = strconv.Atoi(m[1])
		}
		msg := strings.TrimPrefix(err.Error(), "yaml: ")
		if m := yamlLine.FindStringIndex(msg); m != nil {
			msg = strings.TrimLeft(msg[m[1]:], ": ")
		}
		c.add(line, 0, "YAML syntax: %s", msg)
		return nil, c.errs.Err()
	}
	root := &doc
	if root.Kind == yaml.DocumentNode && len(root.Content) == 1 {
		root = root.Content[0]
	}
	if root.Kind != yaml.MappingNode {
		c.add(root.Line, root.Column, "the file must be a mapping with outputs, inputs and gain")
		return nil, c.errs.Err()
	}
	g := &interact.GainSet{Source: name}
	var gain, dgain, outs, ins, dists *yaml.Node
	for i := 0; i+1 < len(root.Content); i += 2 {
		k, v := root.Content[i], root.Content[i+1]
		switch k.Value {
		case "about":
			if v.Kind != yaml.ScalarNode {
				c.add(v.Line, v.Column, "about must be text")
			}
		case "outputs":
			outs = v
		case "inputs":
			ins = v
		case "disturbances":
			dists = v
		case "gain":
			gain = v
		case "disturbance_gain":
			dgain = v
		default:
			c.add(k.Line, k.Column, "unknown key %q: use about, outputs, inputs, disturbances, gain or disturbance_gain", k.Value)
		}
	}
	need := func(n *yaml.Node, key string) bool {
		if n == nil {
			c.add(root.Line, root.Column, "missing %s", key)
			return false
		}
		return true
	}
	if need(outs, "outputs: a map from each output's name to {unit, span, nominal}") {
		g.Outputs = signals(c, outs, "output")
	}
	if need(ins, "inputs: a map from each input's name to {unit, span, nominal}") {
		g.Inputs = signals(c, ins, "input")
	}
	if dists != nil {
		g.Disturbances = signals(c, dists, "disturbance")
	}
	if need(gain, "gain: one row of gains per output, one column per input") {
		g.K = matrix(c, gain, "gain", g.Outputs, g.Inputs, "inputs")
	}
	switch {
	case dists != nil && len(g.Disturbances) > 0 && dgain == nil:
		c.add(dists.Line, dists.Column, "disturbances are listed but disturbance_gain is missing: add one row per output, one column per disturbance")
	case dgain != nil && dists == nil:
		c.add(dgain.Line, dgain.Column, "disturbance_gain without disturbances: list the disturbances, or remove disturbance_gain")
	case dgain != nil:
		g.Kd = matrix(c, dgain, "disturbance_gain", g.Outputs, g.Disturbances, "disturbances")
	}
	if err := c.errs.Err(); err != nil {
		return nil, err
	}
	return g, nil
}

func signals(c *collector, n *yaml.Node, role string) []interact.Signal {
	if n.Kind != yaml.MappingNode || len(n.Content) == 0 {
		c.add(n.Line, n.Column, "%ss must be a map from each name to {unit, span, nominal}, with at least one entry", role)
		return nil
	}
	var out []interact.Signal
	seen := map[string]int{}
	for i := 0; i+1 < len(n.Content); i += 2 {
		k, v := n.Content[i], n.Content[i+1]
		s := interact.Signal{Name: strings.TrimSpace(k.Value)}
		if k.Kind != yaml.ScalarNode || s.Name == "" {
			c.add(k.Line, k.Column, "%s names must be plain text", role)
			continue
		}
		if prev, dup := seen[s.Name]; dup {
			c.add(k.Line, k.Column, "duplicate %s name %q (first on line %d): give each %s its own name", role, s.Name, prev, role)
			continue
		}
		seen[s.Name] = k.Line
		switch {
		case v.Kind == yaml.ScalarNode && (v.Tag == "!!null" || v.Value == ""):
			// name with nothing else
		case v.Kind != yaml.MappingNode:
			c.add(v.Line, v.Column, "%s %q must be followed by a map such as {unit: kg/h, span: 200}, or nothing", role, s.Name)
		default:
			for j := 0; j+1 < len(v.Content); j += 2 {
				fk, fv := v.Content[j], v.Content[j+1]
				switch fk.Value {
				case "unit":
					if fv.Kind != yaml.ScalarNode {
						c.add(fv.Line, fv.Column, "unit of %q must be text such as kg/h", s.Name)
					}
					s.Unit = fv.Value
				case "span":
					s.Span = number(c, fv, "span of "+strconv.Quote(s.Name))
					if !(s.Span > 0) {
						c.add(fv.Line, fv.Column, "span of %q must be positive: the expected range of the signal in its unit", s.Name)
					}
				case "nominal":
					s.Nominal = number(c, fv, "nominal value of "+strconv.Quote(s.Name))
				default:
					c.add(fk.Line, fk.Column, "unknown key %q for %s %q: use unit, span or nominal", fk.Value, role, s.Name)
				}
			}
		}
		out = append(out, s)
	}
	return out
}

func number(c *collector, n *yaml.Node, what string) float64 {
	if n.Kind != yaml.ScalarNode {
		c.add(n.Line, n.Column, "%s must be a number", what)
		return math.NaN()
	}
	v, err := strconv.ParseFloat(strings.TrimSpace(n.Value), 64)
	if err != nil || math.IsNaN(v) || math.IsInf(v, 0) {
		c.add(n.Line, n.Column, "%s: %q is not a finite number", what, n.Value)
		return math.NaN()
	}
	return v
}

func matrix(c *collector, n *yaml.Node, key string, rows, cols []interact.Signal, colRole string) *mat.Dense {
	if n.Kind != yaml.SequenceNode {
		c.add(n.Line, n.Column, "%s must be a list of rows, such as [[12.8, -18.9], [6.6, -19.4]]", key)
		return nil
	}
	if len(rows) == 0 || len(cols) == 0 {
		return nil // reported with the signals
	}
	if len(n.Content) != len(rows) {
		c.add(n.Line, n.Column, "%s has %d rows but there are %d outputs: give one row per output, in the order listed", key, len(n.Content), len(rows))
		return nil
	}
	m := mat.NewDense(len(rows), len(cols), nil)
	for i, row := range n.Content {
		if row.Kind != yaml.SequenceNode {
			c.add(row.Line, row.Column, "row %d of %s must be a list of numbers, such as [12.8, -18.9]", i+1, key)
			continue
		}
		if len(row.Content) != len(cols) {
			c.add(row.Line, row.Column, "row %d of %s (output %q) has %d numbers but there are %d %s: give one per %s", i+1, key, rows[i].Name, len(row.Content), len(cols), colRole, strings.TrimSuffix(colRole, "s"))
			continue
		}
		for j, cell := range row.Content {
			m.Set(i, j, number(c, cell, key+" of "+rows[i].Name+" to "+cols[j].Name))
		}
	}
	return m
}
