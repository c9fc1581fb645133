package library

import (
	"fmt"
	"io/fs"
	"math"
	"regexp"
	"sort"
	"strconv"
	"strings"
	"testing"

	"gopkg.in/yaml.v3"
)

// antoineRow is one row of checkvalues.md section 5 ("Antoine constants
// (NIST WebBook form log10(P/bar) = A - B/(T/K + C)) and normal boiling
// points"). TbR is the table's [R] column (T at 1.01325 bar recomputed from
// the same constants); Tb is its handbook column (0 where the table gives
// none), tbMemory marks handbook values the table tags [M].
type antoineRow struct {
	component string
	set       int // index into Component.Antoine
	A, B, C   float64
	tmin      float64
	tmax      float64
	source    string
	srcMemory bool // the table tags the data-source name [M]
	TbR       float64
	Tb        float64
	tbMemory  bool
	tbInRange bool // the normal boiling point lies inside the validity range
}

// Source: checkvalues.md section 5 (constants [C], WebBook data sources as
// tagged there, [R] boiling temperatures, handbook Tb as tagged).
var antoineTable = []antoineRow{
	{"benzene", 0, 4.01814, 1203.835, -53.226, 287.70, 354.07, "NIST Chemistry WebBook, Williamham, Taylor et al. 1945", false, 353.253, 353.3, false, true},
	{"benzene", 1, 4.72583, 1660.652, -1.461, 333.4, 373.5, "NIST Chemistry WebBook, data source not recorded", true, 353.286, 0, false, true},
	{"toluene", 0, 4.07827, 1343.943, -53.773, 308.52, 384.66, "NIST Chemistry WebBook, Williamham, Taylor et al. 1945", false, 383.773, 383.8, false, true},
	{"water", 0, 5.08354, 1663.125, -45.622, 344, 373, "NIST Chemistry WebBook, Bridgeman & Aldrich 1964", false, 373.149, 373.124, true, false},
	{"water", 1, 4.6543, 1435.264, -64.848, 255.9, 373, "NIST Chemistry WebBook, Stull 1947", true, 373.601, 0, false, false},
	{"water", 2, 5.40221, 1838.675, -31.737, 273, 303, "NIST Chemistry WebBook, Bridgeman & Aldrich 1964", true, 372.454, 0, false, false},
	{"methanol", 0, 5.20409, 1581.341, -33.50, 288.1, 356.83, "NIST Chemistry WebBook, Ambrose & Sprake 1970", true, 337.699, 337.75, true, true},
	{"ethanol", 0, 5.24677, 1598.673, -46.424, 292.77, 366.63, "NIST Chemistry WebBook, Ambrose & Sprake 1970", false, 351.453, 351.44, true, true},
	{"n-hexane", 0, 4.00266, 1171.53, -48.784, 286.18, 342.69, "NIST Chemistry WebBook, Williamham, Taylor et al. 1945", true, 341.890, 341.88, true, true},
	{"n-heptane", 0, 4.02832, 1268.636, -56.199, 299.07, 372.43, "NIST Chemistry WebBook, Williamham, Taylor et al. 1945", true, 371.576, 371.58, true, true},
}

// boilingPoint finds T (K) with a.Pressure(T) = 101325 Pa by bisection.
func boilingPoint(a Antoine) float64 {
	lo, hi := 200.0, 600.0
	for range 200 {
		mid := (lo + hi) / 2
		if a.Pressure(mid) < 101325 {
			lo = mid
		} else {
			hi = mid
		}
	}
	return (lo + hi) / 2
}

func TestAntoineMatchesCheckvalues(t *testing.T) {
	comps, err := Components()
	if err != nil {
		t.Fatal(err)
	}
	byName := map[string]Component{}
	for _, c := range comps {
		byName[c.Name] = c
	}
	for _, row := range antoineTable {
		t.Run(fmt.Sprintf("%s/%d", row.component, row.set), func(t *testing.T) {
			c, ok := byName[row.component]
			if !ok || row.set >= len(c.Antoine) {
				t.Fatalf("components.yaml lacks %s set %d", row.component, row.set)
			}
			a := c.Antoine[row.set]
			// Source: checkvalues §5, constants [C]: exact equality, the data
			// must be the table's.
			if a.A != row.A || a.B != row.B || a.C != row.C || a.Tmin != row.tmin || a.Tmax != row.tmax {
				t.Errorf("constants %v %v %v [%v, %v], checkvalues §5 has %v %v %v [%v, %v]",
					a.A, a.B, a.C, a.Tmin, a.Tmax, row.A, row.B, row.C, row.tmin, row.tmax)
			}
			if a.Source != row.source || a.FromMemory != row.srcMemory {
				t.Errorf("source %q (from memory %v), checkvalues §5 gives %q (from memory %v)",
					a.Source, a.FromMemory, row.source, row.srcMemory)
			}
			Tb := boilingPoint(a)
			// Source: checkvalues §5, column "T at 1.01325 bar" [R]: within 0.1 K.
			if math.Abs(Tb-row.TbR) > 0.1 {
				t.Errorf("T at 1.01325 bar = %.3f K, checkvalues §5 [R] %.3f K", Tb, row.TbR)
			}
			// Source: checkvalues §5, handbook Tb column (WebBook average [C],
			// or from memory where the table marks [M]): within 0.5 K.
			if row.Tb != 0 && math.Abs(Tb-row.Tb) > 0.5 {
				t.Errorf("normal boiling point %.3f K, handbook %.3f K (from memory: %v)", Tb, row.Tb, row.tbMemory)
			}
			// The validity range is what makes a template warn: checkvalues §5
			// notes the water sets whose boiling point lies outside it.
			if got := a.InRange(Tb); got != row.tbInRange {
				t.Errorf("InRange(%.3f K) = %v, want %v (range %v..%v K)", Tb, got, row.tbInRange, a.Tmin, a.Tmax)
			}
		})
	}
}

// Molar masses must agree with the formula and the IUPAC conventional
// atomic weights C 12.011, H 1.008, O 15.999 (from memory).
func TestMolarMassFromFormula(t *testing.T) {
	weights := map[string]float64{"C": 12.011, "H": 1.008, "O": 15.999}
	re := regexp.MustCompile(`([A-Z][a-z]?)(\d*)`)
	comps, err := Components()
	if err != nil {
		t.Fatal(err)
	}
	for _, c := range comps {
		var m float64
		for _, g := range re.FindAllStringSubmatch(c.Formula, -1) {
			w, ok := weights[g[1]]
			if !ok {
				t.Fatalf("%s: element %s not in the test's table", c.Name, g[1])
			}
			n := 1
			if g[2] != "" {
				n, _ = strconv.Atoi(g[2])
			}
			m += w * float64(n)
		}
		if got := c.MolarMass * 1000; math.Abs(got-m) > 0.002 {
			t.Errorf("%s %s: molar mass %.3f g/mol, formula gives %.3f", c.Name, c.Formula, got, m)
		}
	}
}

func TestFindComponent(t *testing.T) {
	for _, name := range []string{"benzene", "BEN", "n-hexane", "nC4"} {
		if _, err := FindComponent(name); err != nil {
			t.Errorf("FindComponent(%q): %v", name, err)
		}
	}
	_, err := FindComponent("benzen")
	if err == nil || !strings.Contains(err.Error(), `did you mean "benzene"`) {
		t.Errorf("FindComponent(benzen) = %v, want a suggestion of benzene", err)
	}
}

func TestParseComponentsErrors(t *testing.T) {
	tests := []struct{ in, want string }{
		{"components: [{name: x, symbol: x, formula: C, molar_mass: 12, antoine: [{A: 1, B: 2, tmin: 1, tmax: 2, source: 'NIST Chemistry WebBook, y'}]}]", "needs A, B and C"},
		{"components: [{name: x, symbol: x, formula: C, molar_mass: 0}]", "molar_mass must be positive"},
		{"components: [{name: x, symbol: y, formula: C, molar_mass: 1}, {name: x, symbol: z, formula: C, molar_mass: 1}]", "used twice"},
		{"components: [{name: x, symbol: x, formula: C, molar_mass: 12, antoine: [{A: 1, B: 2, C: 3, tmin: 1, tmax: 2, source: 'a book'}]}]", "NIST Chemistry WebBook"},
		{"components: [{name: x, symbol: x, formula: C, molar_mass: 12, colour: red}]", "field colour not found"},
	}
	for _, tt := range tests {
		_, err := parseComponents([]byte(tt.in))
		if err == nil || !strings.Contains(err.Error(), tt.want) {
			t.Errorf("parseComponents(%s) = %v, want an error containing %q", tt.in, err, tt.want)
		}
	}
}

// Every template that uses Antoine constants uses exactly the primary set of
// components.yaml (checked against checkvalues §5 above) and declares a
// check with that set's validity range, so a solved temperature outside it
// gives a warning.
func TestTemplatesUseComponentAntoine(t *testing.T) {
	comps, err := Components()
	if err != nil {
		t.Fatal(err)
	}
	bySym := map[string]Component{}
	for _, c := range comps {
		if len(c.Antoine) > 0 {
			bySym[c.Symbol] = c
		}
	}
	lib := New("")
	names, err := lib.embeddedNames()
	if err != nil {
		t.Fatal(err)
	}
	used := map[string][]string{}
	paramRE := regexp.MustCompile(`^([ABC])_(\w+)$`)
	for _, name := range names {
		data, err := fs.ReadFile(lib.fsys, name+".yaml")
		if err != nil {
			t.Fatal(err)
		}
		var f struct {
			Parameters map[string]yaml.Node `yaml:"parameters"`
			Checks     map[string]struct {
				Of, Min, Max string
			} `yaml:"checks"`
		}
		if err := yaml.Unmarshal(data, &f); err != nil {
			t.Fatalf("%s: %v", name, err)
		}
		seen := map[string]map[string]float64{}
		for pname, node := range f.Parameters {
			m := paramRE.FindStringSubmatch(pname)
			if m == nil {
				continue
			}
			if _, ok := bySym[m[2]]; !ok {
				continue
			}
			v, unit := paramValue(t, name, pname, &node)
			if want := map[string]string{"A": "", "B": "K", "C": "K"}[m[1]]; unit != want {
				t.Errorf("%s: %s has unit %q, want %q", name, pname, unit, want)
			}
			if seen[m[2]] == nil {
				seen[m[2]] = map[string]float64{}
			}
			seen[m[2]][m[1]] = v
		}
		for sym, vals := range seen {
			c := bySym[sym]
			a, _ := c.Primary()
			used[name] = append(used[name], c.Name)
			want := map[string]float64{"A": a.A, "B": a.B, "C": a.C}
			for k, w := range want {
				if got, ok := vals[k]; !ok || got != w {
					t.Errorf("%s: %s_%s = %v (present %v), components.yaml %s has %v", name, k, sym, got, ok, c.Name, w)
				}
			}
			chk, ok := f.Checks["antoine_"+sym]
			if !ok {
				t.Errorf("%s: uses %s Antoine constants but declares no check antoine_%s", name, c.Name, sym)
				continue
			}
			if chk.Of == "" {
				t.Errorf("%s: check antoine_%s has no of:", name, sym)
			}
			lo, hi := kelvin(t, name, chk.Min), kelvin(t, name, chk.Max)
			if lo != a.Tmin || hi != a.Tmax {
				t.Errorf("%s: check antoine_%s range %v..%v K, components.yaml %s has %v..%v K", name, sym, lo, hi, c.Name, a.Tmin, a.Tmax)
			}
		}
	}
	// The test must not pass vacuously: the flash template uses three sets.
	if got := strings.Join(sorted(used["flash"]), ","); got != "benzene,n-hexane,toluene" {
		t.Errorf("flash uses Antoine sets of %q, want benzene,n-hexane,toluene", got)
	}
}

func sorted(s []string) []string {
	out := append([]string(nil), s...)
	sort.Strings(out)
	return out
}

// paramValue reads a parameter written as a bare number or {value, unit}.
func paramValue(t *testing.T, file, name string, n *yaml.Node) (float64, string) {
	t.Helper()
	var s struct {
		Value float64 `yaml:"value"`
		Unit  string  `yaml:"unit"`
	}
	if n.Kind == yaml.ScalarNode {
		v, err := strconv.ParseFloat(n.Value, 64)
		if err != nil {
			t.Fatalf("%s: parameter %s: %v", file, name, err)
		}
		return v, ""
	}
	if err := n.Decode(&s); err != nil {
		t.Fatalf("%s: parameter %s: %v", file, name, err)
	}
	return s.Value, s.Unit
}

// kelvin reads "<number> K".
func kelvin(t *testing.T, file, s string) float64 {
	t.Helper()
	num, unit, ok := strings.Cut(strings.TrimSpace(s), " ")
	v, err := strconv.ParseFloat(num, 64)
	if !ok || unit != "K" || err != nil {
		t.Fatalf("%s: check bound %q: want \"<number> K\"", file, s)
	}
	return v
}
