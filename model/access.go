package model

import (
	"fmt"
	"math"
	"sort"
	"strings"

	"github.com/loopwright/loopwright/units"
)

// slot is where a named scalar lives: Unknowns[i] or Params[i].
type slot struct {
	unknown bool
	i       int
}

func buildIndex(s *System) map[string]slot {
	m := make(map[string]slot, len(s.Unknowns)+len(s.Params))
	for i, u := range s.Unknowns {
		m[u.Name] = slot{true, i}
	}
	for i, p := range s.Params {
		m[p.Name] = slot{false, i}
	}
	return m
}

// Walk calls f for n and every node below it, parents before children. A
// shared subtree is visited each time it appears.
func Walk(n Node, f func(Node)) {
	f(n)
	switch n := n.(type) {
	case *Const, *Var, *Param:
	case *Neg:
		Walk(n.X, f)
	case *Binary:
		Walk(n.L, f)
		Walk(n.R, f)
	case *Call:
		for _, a := range n.Args {
			Walk(a, f)
		}
	default:
		panic(fmt.Sprintf("model: Walk: unknown node type %T", n))
	}
}

// walkLeaves calls leaf for every Const, Var and Param under n, visiting a
// subtree shared by pointer only once per seen map.
func walkLeaves(n Node, seen map[Node]bool, leaf func(Node)) {
	switch n := n.(type) {
	case *Const, *Var, *Param:
		leaf(n)
		return
	}
	if seen[n] {
		return
	}
	seen[n] = true
	switch n := n.(type) {
	case *Neg:
		walkLeaves(n.X, seen, leaf)
	case *Binary:
		walkLeaves(n.L, seen, leaf)
		walkLeaves(n.R, seen, leaf)
	case *Call:
		for _, a := range n.Args {
			walkLeaves(a, seen, leaf)
		}
	default:
		panic(fmt.Sprintf("model: unknown node type %T", n))
	}
}

// collect returns, for each equation, the sorted distinct indices that pick
// returns for the leaves of its residual. Shared subtrees are visited once
// per equation.
func (s *System) collect(pick func(Node) (int, bool)) [][]int {
	out := make([][]int, len(s.Equations))
	for q, eq := range s.Equations {
		set := map[int]bool{}
		walkLeaves(eq.Residual, map[Node]bool{}, func(n Node) {
			if i, ok := pick(n); ok {
				set[i] = true
			}
		})
		row := make([]int, 0, len(set))
		for i := range set {
			row = append(row, i)
		}
		sort.Ints(row)
		out[q] = row
	}
	return out
}

// Incidence lists, for each equation, the sorted indices of the unknowns
// that appear in it.
func (s *System) Incidence() [][]int {
	return s.collect(func(n Node) (int, bool) {
		if v, ok := n.(*Var); ok {
			return v.Index, true
		}
		return 0, false
	})
}

// ParamIncidence lists, for each equation, the sorted indices of the
// parameters (inputs and disturbances included) that appear in it.
func (s *System) ParamIncidence() [][]int {
	return s.collect(func(n Node) (int, bool) {
		if p, ok := n.(*Param); ok {
			return p.Index, true
		}
		return 0, false
	})
}

// Lookup finds a scalar by name ("x[21]", "x[2,3]" or "F"; spaces are
// ignored) and returns its role and its index in Unknowns (for RoleUnknown)
// or Params (for the other roles).
func (s *System) Lookup(name string) (role Role, index int, ok bool) {
	name = normName(name)
	if s.index != nil {
		sl, found := s.index[name]
		if !found {
			return 0, 0, false
		}
		if sl.unknown {
			return RoleUnknown, sl.i, true
		}
		return s.Params[sl.i].Role, sl.i, true
	}
	for i, u := range s.Unknowns {
		if u.Name == name {
			return RoleUnknown, i, true
		}
	}
	for i, p := range s.Params {
		if p.Name == name {
			return p.Role, i, true
		}
	}
	return 0, 0, false
}

func (s *System) names() []string {
	var out []string
	for _, u := range s.Unknowns {
		out = append(out, u.Name)
	}
	for _, p := range s.Params {
		out = append(out, p.Name)
	}
	return out
}

// SetValue sets the value of a parameter, input or disturbance, or the
// starting guess of an unknown, from text such as "1.1" (in the symbol's
// declared unit) or "1.1 kmol/min" (converted). The value is stored in SI.
func (s *System) SetValue(name, text string) error {
	role, i, ok := s.Lookup(name)
	if !ok {
		msg := fmt.Sprintf("no quantity named %q in model %s", strings.TrimSpace(name), s.Name)
		if sug := nearest(normName(name), s.names()); sug != "" {
			msg += fmt.Sprintf("; did you mean %q?", sug)
		}
		return fmt.Errorf("%s", msg)
	}
	var sym *Symbol
	if role == RoleUnknown {
		sym = &s.Unknowns[i]
	} else {
		sym = &s.Params[i]
	}
	v, u, hasUnit, err := units.ParseQuantity(text)
	if err != nil {
		return fmt.Errorf("%s=%s: %v", sym.Name, text, err)
	}
	var si float64
	if hasUnit {
		if u.Dim.String() != sym.Unit.Dim {
			want := sym.Unit.Text
			if want == "" {
				want = "no unit (dimensionless)"
			}
			return fmt.Errorf("%s=%s: %s is %s but %s is in %s", sym.Name, text, u.Text, u.Dim.Describe(), sym.Name, want)
		}
		si = u.ToSI(v)
	} else {
		si = sym.Unit.ToSI(v)
	}
	if math.IsInf(si, 0) || math.IsNaN(si) {
		return fmt.Errorf("%s=%s: not a finite value", sym.Name, text)
	}
	sym.Value = si
	return nil
}
