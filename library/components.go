package library

import (
	_ "embed"
	"errors"
	"fmt"
	"math"
	"strings"

	"gopkg.in/yaml.v3"
)

//go:embed components.yaml
var componentsYAML []byte

// AntoineForm is the only Antoine form the component data use, the NIST
// Chemistry WebBook's: pressure in bar, temperature in kelvin.
const AntoineForm = "log10(P/bar) = A - B/(T/K + C)"

// Component is one pure component's constants.
type Component struct {
	Name      string    // "benzene", "n-hexane"
	Symbol    string    // suffix templates use: A_ben, antoine_ben
	Formula   string    // "C6H6"
	MolarMass float64   // kg/mol (SI)
	Antoine   []Antoine // vapour-pressure sets; the first is the primary one
}

// Antoine is one set of Antoine constants in AntoineForm, with the
// temperature range over which it was fitted and where it comes from.
type Antoine struct {
	A, B, C    float64 // B and C in kelvin
	Tmin, Tmax float64 // validity range, K
	Source     string  // "NIST Chemistry WebBook, <data source>"
	FromMemory bool    // the data-source attribution is from memory only
}

// Pressure returns the vapour pressure in Pa at temperature T in K. It
// extrapolates outside [Tmin, Tmax]; check InRange.
func (a Antoine) Pressure(T float64) float64 {
	return 1e5 * math.Pow(10, a.A-a.B/(T+a.C))
}

// InRange reports whether T (K) lies in the set's validity range.
func (a Antoine) InRange(T float64) bool { return T >= a.Tmin && T <= a.Tmax }

// Primary returns the component's primary Antoine set; ok is false when it
// has none.
func (c Component) Primary() (a Antoine, ok bool) {
	if len(c.Antoine) == 0 {
		return Antoine{}, false
	}
	return c.Antoine[0], true
}

type componentFile struct {
	Components []struct {
		Name      string  `yaml:"name"`
		Symbol    string  `yaml:"symbol"`
		Formula   string  `yaml:"formula"`
		MolarMass float64 `yaml:"molar_mass"` // g/mol in the file
		Antoine   []struct {
			A          *float64 `yaml:"A"`
			B          *float64 `yaml:"B"`
			C          *float64 `yaml:"C"`
			Tmin       float64  `yaml:"tmin"`
			Tmax       float64  `yaml:"tmax"`
			Source     string   `yaml:"source"`
			FromMemory bool     `yaml:"from_memory"`
		} `yaml:"antoine"`
	} `yaml:"components"`
}

// Components returns the embedded pure-component data, in file order.
func Components() ([]Component, error) {
	return parseComponents(componentsYAML)
}

// FindComponent returns the component with the given name or symbol
// ("benzene" or "ben"), ignoring case.
func FindComponent(name string) (Component, error) {
	all, err := Components()
	if err != nil {
		return Component{}, err
	}
	var names []string
	for _, c := range all {
		if strings.EqualFold(c.Name, name) || strings.EqualFold(c.Symbol, name) {
			return c, nil
		}
		names = append(names, c.Name)
	}
	msg := fmt.Sprintf("unknown component %q", name)
	if s := nearest(name, names); s != "" {
		msg += fmt.Sprintf(": did you mean %q?", s)
	}
	return Component{}, fmt.Errorf("%s (known: %s)", msg, strings.Join(names, ", "))
}

func parseComponents(data []byte) ([]Component, error) {
	var f componentFile
	dec := yaml.NewDecoder(strings.NewReader(string(data)))
	dec.KnownFields(true)
	if err := dec.Decode(&f); err != nil {
		return nil, fmt.Errorf("components.yaml: %w", err)
	}
	var errs []error
	seen := map[string]bool{}
	out := make([]Component, 0, len(f.Components))
	for i, fc := range f.Components {
		where := fmt.Sprintf("components.yaml: component %d (%s)", i+1, fc.Name)
		if fc.Name == "" || fc.Symbol == "" || fc.Formula == "" {
			errs = append(errs, fmt.Errorf("%s: name, symbol and formula are required", where))
		}
		for _, key := range []string{strings.ToLower(fc.Name), strings.ToLower(fc.Symbol)} {
			if seen[key] {
				errs = append(errs, fmt.Errorf("%s: %q is used twice", where, key))
			}
			seen[key] = true
		}
		if !(fc.MolarMass > 0) {
			errs = append(errs, fmt.Errorf("%s: molar_mass must be positive (g/mol)", where))
		}
		c := Component{Name: fc.Name, Symbol: fc.Symbol, Formula: fc.Formula, MolarMass: fc.MolarMass / 1000}
		for j, fa := range fc.Antoine {
			if fa.A == nil || fa.B == nil || fa.C == nil {
				errs = append(errs, fmt.Errorf("%s: Antoine set %d needs A, B and C", where, j+1))
				continue
			}
			if !(fa.Tmin > 0 && fa.Tmax > fa.Tmin) {
				errs = append(errs, fmt.Errorf("%s: Antoine set %d needs 0 < tmin < tmax (K)", where, j+1))
			}
			if !strings.HasPrefix(fa.Source, "NIST Chemistry WebBook, ") {
				errs = append(errs, fmt.Errorf("%s: Antoine set %d: source must read \"NIST Chemistry WebBook, <data source>\"", where, j+1))
			}
			c.Antoine = append(c.Antoine, Antoine{A: *fa.A, B: *fa.B, C: *fa.C, Tmin: fa.Tmin, Tmax: fa.Tmax,
				Source: fa.Source, FromMemory: fa.FromMemory})
		}
		out = append(out, c)
	}
	if err := errors.Join(errs...); err != nil {
		return nil, err
	}
	return out, nil
}
