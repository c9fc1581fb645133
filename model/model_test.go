package model

import (
	"math"
	"os"
	"reflect"
	"strings"
	"testing"
)

// eval computes a node at unknowns x and parameters p (a test oracle,
// written apart from the jacobian package on purpose).
func eval(n Node, x, p []float64) float64 {
	switch n := n.(type) {
	case *Const:
		return n.Value
	case *Var:
		return x[n.Index]
	case *Param:
		return p[n.Index]
	case *Neg:
		return -eval(n.X, x, p)
	case *Binary:
		l, r := eval(n.L, x, p), eval(n.R, x, p)
		switch n.Op {
		case OpAdd:
			return l + r
		case OpSub:
			return l - r
		case OpMul:
			return l * r
		case OpDiv:
			return l / r
		case OpPow:
			return math.Pow(l, r)
		}
	case *Call:
		a := make([]float64, len(n.Args))
		for i, x0 := range n.Args {
			a[i] = eval(x0, x, p)
		}
		return callValue(n.Fn, a)
	}
	panic("eval: unknown node")
}

func values(s []Symbol) []float64 {
	out := make([]float64, len(s))
	for i, v := range s {
		out[i] = v.Value
	}
	return out
}

func mustExpand(t testing.TB, name, text string, opts *ExpandOptions) *System {
	t.Helper()
	f, err := Load(name, strings.NewReader(text))
	if err != nil {
		t.Fatalf("Load: %v", err)
	}
	sys, err := f.Expand(opts)
	if err != nil {
		t.Fatalf("Expand: %v", err)
	}
	return sys
}

func loadExample(t testing.TB, name string) *System {
	t.Helper()
	data, err := os.ReadFile("../testdata/models/" + name)
	if err != nil {
		t.Fatal(err)
	}
	return mustExpand(t, name, string(data), nil)
}

func near(a, b float64) bool { return math.Abs(a-b) <= 1e-9*math.Max(1, math.Abs(b)) }

func names(s []Symbol, idx []int) []string {
	var out []string
	for _, i := range idx {
		out = append(out, s[i].Name)
	}
	return out
}

func TestSyrupExample(t *testing.T) {
	sys := loadExample(t, "syrup.yaml")
	if len(sys.Unknowns) != 2 || len(sys.Equations) != 2 {
		t.Fatalf("%d unknowns, %d equations; want 2 and 2", len(sys.Unknowns), len(sys.Equations))
	}
	if got := names(sys.Params, sys.Inputs); !reflect.DeepEqual(got, []string{"f_conc", "f_water"}) {
		t.Errorf("inputs %v", got)
	}
	if got := names(sys.Params, sys.Disturbances); !reflect.DeepEqual(got, []string{"s_conc"}) {
		t.Errorf("disturbances %v", got)
	}
	var outs []string
	for _, o := range sys.Outputs {
		outs = append(outs, o.Name)
	}
	if !reflect.DeepEqual(outs, []string{"f_out", "s_out"}) {
		t.Errorf("outputs %v", outs)
	}
	// 1 h = 3600 s (NIST SP 811, Appendix B.8): 800 kg/h = 0.2222 kg/s.
	_, i, _ := sys.Lookup("f_conc")
	if p := sys.Params[i]; !near(p.Value, 800.0/3600) || !near(p.Span, 200.0/3600) || !near(p.Max, 1500.0/3600) {
		t.Errorf("f_conc in SI: value %g span %g max %g", p.Value, p.Span, p.Max)
	}
	// Residuals at the guesses, by hand: total 5000 - (800 + 4200) = 0 kg/h;
	// sugar 5000*0.1 - (800*0.65 + 4200*0) = -20 kg/h.
	x, p := values(sys.Unknowns), values(sys.Params)
	want := []float64{0, -20.0 / 3600}
	for q, eq := range sys.Equations {
		if got := eval(eq.Residual, x, p); !near(got, want[q]) {
			t.Errorf("residual %s = %g, want %g", eq.Name, got, want[q])
		}
		if b, ok := eq.Residual.(*Binary); !ok || b.Op != OpSub {
			t.Errorf("residual of %s is not lhs - rhs", eq.Name)
		}
	}
	if sys.Outputs[1].Span != 0.002 {
		t.Errorf("s_out span %g", sys.Outputs[1].Span)
	}
	if len(sys.Warnings) != 0 {
		t.Errorf("warnings: %v", sys.Warnings)
	}
}

func TestColumnExample(t *testing.T) {
	sys := loadExample(t, "column.yaml")
	if len(sys.Unknowns) != 41 || len(sys.Equations) != 41 {
		t.Fatalf("%d unknowns, %d equations; want 41 and 41", len(sys.Unknowns), len(sys.Equations))
	}
	if sys.Equations[0].Name != "reboiler" || sys.Equations[20].Name != "tray[21]" || sys.Equations[40].Name != "condenser" {
		t.Errorf("equation names %s %s %s", sys.Equations[0].Name, sys.Equations[20].Name, sys.Equations[40].Name)
	}
	inc := sys.Incidence()
	if !reflect.DeepEqual(inc[0], []int{0, 1}) || !reflect.DeepEqual(inc[20], []int{19, 20, 21}) || !reflect.DeepEqual(inc[40], []int{39, 40}) {
		t.Errorf("incidence %v %v %v", inc[0], inc[20], inc[40])
	}
	pinc := sys.ParamIncidence()
	// tray 21 is the feed stage: it sees alpha, F, z_feed, L, V; tray 30 no feed terms but F in Lliq? no: above NF, Lliq = L.
	wantP := func(q int, want ...string) {
		t.Helper()
		if got := names(sys.Params, pinc[q]); !reflect.DeepEqual(got, want) {
			t.Errorf("params of %s: %v, want %v", sys.Equations[q].Name, got, want)
		}
	}
	wantP(20, "alpha", "F", "z_feed", "L", "V")
	wantP(29, "alpha", "L", "V")
	// Reboiler residual at x = 0.5 everywhere, by hand: y = 1.5*0.5/(1+0.25)
	// = 0.6; (L+F)*0.5 - V*0.6 - (F+L-V)*0.5 = -0.1*V = -0.3206 kmol/min,
	// and 1 kmol/min = 1000/60 mol/s (SI prefix and minute, NIST SP 811).
	x, p := values(sys.Unknowns), values(sys.Params)
	if got, want := eval(sys.Equations[0].Residual, x, p), -0.3206*1000/60; !near(got, want) {
		t.Errorf("reboiler residual %g, want %g", got, want)
	}
	if len(sys.Outputs) != 2 || sys.Outputs[0].Name != "top" || !near(sys.Outputs[0].Span, 0.01) {
		t.Errorf("outputs %+v", sys.Outputs)
	}
	if v, ok := sys.Outputs[0].Expr.(*Var); !ok || v.Index != 40 {
		t.Errorf("top is %#v, want x[41]", sys.Outputs[0].Expr)
	}
	if len(sys.Defines) != 41+41+2 {
		t.Errorf("%d scalar defines, want 84", len(sys.Defines))
	}
	if sys.Constants["NT"] != 41 || sys.Constants["NF"] != 21 {
		t.Errorf("constants %v", sys.Constants)
	}
	if got := names(sys.Params, sys.Disturbances); !reflect.DeepEqual(got, []string{"F", "z_feed"}) {
		t.Errorf("disturbances %v", got)
	}
}

func TestLookupSetValue(t *testing.T) {
	sys := loadExample(t, "column.yaml")
	tests := []struct {
		name, text string
		role       Role
		si         float64
		err        string
	}{
		{name: "F", text: "1.1", role: RoleDisturbance, si: 1.1 * 1000 / 60},
		{name: "F", text: "66 kmol/h", role: RoleDisturbance, si: 66 * 1000 / 3600.0},
		{name: "L", text: "2.8 kmol/min", role: RoleInput, si: 2.8 * 1000 / 60},
		{name: "x[21]", text: "0.4", role: RoleUnknown, si: 0.4},
		{name: "x[ 3 ]", text: "0.2", role: RoleUnknown, si: 0.2},
		{name: "alpha", text: "1.6", role: RoleParameter, si: 1.6},
		{name: "F", text: "3 kg/s", err: "F=3 kg/s: kg/s is kg/s (mass flow) but F is in kmol/min"},
		{name: "alhpa", text: "1", err: `no quantity named "alhpa" in model binary-column; did you mean "alpha"?`},
		{name: "x[42]", text: "1", err: `no quantity named "x[42]"`},
		{name: "F", text: "abc", err: "F=abc"},
	}
	for _, tc := range tests {
		err := sys.SetValue(tc.name, tc.text)
		if tc.err != "" {
			if err == nil || !strings.Contains(err.Error(), tc.err) {
				t.Errorf("SetValue(%q, %q) = %v, want error containing %q", tc.name, tc.text, err, tc.err)
			}
			continue
		}
		if err != nil {
			t.Errorf("SetValue(%q, %q): %v", tc.name, tc.text, err)
			continue
		}
		role, i, ok := sys.Lookup(tc.name)
		if !ok || role != tc.role {
			t.Errorf("Lookup(%q) = %v %v", tc.name, role, ok)
			continue
		}
		v := sys.Params
		if role == RoleUnknown {
			v = sys.Unknowns
		}
		if !near(v[i].Value, tc.si) {
			t.Errorf("%s = %g in SI, want %g", tc.name, v[i].Value, tc.si)
		}
	}
}

const featureModel = `model: features
about: Invented test model exercising the format's features.
constants: {NC: 3, NT: 4, CONFIG: 1}
sets: {comp: 1..NC, stage: 1..NT}
parameters:
  k: {value: [1, 2, 3], over: comp}
  T0: {value: 25, unit: degC}
  P0: {value: "1.5 bar", unit: kPa}
  spare: 7
variables:
  x: {over: [stage, comp], guess: 0.2, min: 0, max: 1}
  T: {unit: K, min: 280, max: 320}
  Q: {unit: kW}
inputs:
  Lc: {value: 1, unit: mol/s, when: "CONFIG == 1"}
  Dc: {value: 1, unit: mol/s, when: "CONFIG == 2"}
define:
  tot: {for: s in stage, is: "sum(c in comp, x[s,c])"}
  unused: 2*T
equations:
  closure: {for: s in stage, eq: "tot[s] = 1"}
  ratio: {for: "s in stage, c in 2..NC", eq: "x[s][c] = k[c]/k[1] * x[s,1] * (c % 2 == 0 ? 1 : 1)"}
  temp: "T = T0 + 0*Q"
  heat: "Q = sqrt(P0^2) * 1 m^3/s"
checks:
  t_ok: {of: T, min: "10 degC", max: "40 degC", note: "invented validity range"}
  x_ok: {for: s in stage, of: "x[s,1]", min: 0, max: 1}
`

func TestFeatures(t *testing.T) {
	// "1 m^3/s" is not a formula: replace that line, which tests a parse error below.
	text := strings.Replace(featureModel, `"Q = sqrt(P0^2) * 1 m^3/s"`, `"Q = sqrt(P0^2) * Lc / Lc + Q"`, 1)
	f, err := Load("features.yaml", strings.NewReader(text))
	if err != nil {
		t.Fatal(err)
	}
	sys, err := f.Expand(nil)
	if err == nil {
		t.Fatalf("expected a unit error for heat, got none")
	}
	if !strings.Contains(err.Error(), `equation "heat": the terms of a sum differ in dimension`) {
		t.Fatalf("error %v", err)
	}
	text = strings.Replace(featureModel, `"Q = sqrt(P0^2) * 1 m^3/s"`, `"Q = Q0"`, 1)
	text = strings.Replace(text, "  spare: 7\n", "  spare: 7\n  Q0: {value: 3, unit: kW}\n", 1)
	sys = mustExpand(t, "features.yaml", text, nil)
	if len(sys.Unknowns) != 4*3+2 || len(sys.Equations) != 4+4*2+2 {
		t.Fatalf("%d unknowns, %d equations", len(sys.Unknowns), len(sys.Equations))
	}
	if sys.Unknowns[4].Name != "x[2,2]" || !reflect.DeepEqual(sys.Unknowns[4].Index, []int{2, 2}) {
		t.Errorf("unknown 4 is %s %v", sys.Unknowns[4].Name, sys.Unknowns[4].Index)
	}
	// T has no guess: the middle of min and max.
	_, iT, _ := sys.Lookup("T")
	if sys.Unknowns[iT].Value != 300 {
		t.Errorf("T guess %g, want 300", sys.Unknowns[iT].Value)
	}
	// Affine and prefixed units to SI: 25 degC = 298.15 K; 1.5 bar = 150 kPa
	// = 150000 Pa (NIST SP 811, B.8).
	_, i0, _ := sys.Lookup("T0")
	_, iP, _ := sys.Lookup("P0")
	if !near(sys.Params[i0].Value, 298.15) || !near(sys.Params[iP].Value, 150000) {
		t.Errorf("T0 %g K, P0 %g Pa", sys.Params[i0].Value, sys.Params[iP].Value)
	}
	// when: only Lc exists with CONFIG = 1.
	if got := names(sys.Params, sys.Inputs); !reflect.DeepEqual(got, []string{"Lc"}) {
		t.Errorf("inputs %v", got)
	}
	// Residuals: closure at the guess 3*0.2 - 1; ratio x[s,c] - k[c]/k[1]*x[s,1].
	x, p := values(sys.Unknowns), values(sys.Params)
	for _, eq := range sys.Equations {
		got := eval(eq.Residual, x, p)
		var want float64
		switch {
		case strings.HasPrefix(eq.Name, "closure"):
			want = 0.6 - 1
		case eq.Name == "ratio[1,2]":
			want = 0.2 - 2*0.2
		case eq.Name == "ratio[4,3]":
			want = 0.2 - 3*0.2
		case eq.Name == "temp":
			want = 300 - 298.15
		default:
			continue
		}
		if !near(got, want) {
			t.Errorf("%s residual %g, want %g", eq.Name, got, want)
		}
	}
	// Checks in SI: 10 degC .. 40 degC.
	if len(sys.Checks) != 1+4 || sys.Checks[0].Name != "t_ok" || !near(sys.Checks[0].Min, 283.15) || !near(sys.Checks[0].Max, 313.15) {
		t.Errorf("checks %+v", sys.Checks)
	}
	if sys.Checks[4].Name != "x_ok[4]" {
		t.Errorf("check 4 is %s", sys.Checks[4].Name)
	}
	// Warnings: P0, spare and Lc unused, define "unused" unused.
	var ws []string
	for _, w := range sys.Warnings {
		ws = append(ws, w.Msg)
	}
	want := []string{`parameter "P0" is not used by any equation`, `parameter "spare" is not used by any equation`, `input "Lc" is not used by any equation`, `define "unused" is not used by any equation, output or check`}
	if !reflect.DeepEqual(ws, want) {
		t.Errorf("warnings\n%q\nwant\n%q", ws, want)
	}
	// Overriding CONFIG switches the input.
	sys = mustExpand(t, "features.yaml", text, &ExpandOptions{Constants: map[string]float64{"CONFIG": 2}})
	if got := names(sys.Params, sys.Inputs); !reflect.DeepEqual(got, []string{"Dc"}) {
		t.Errorf("inputs with CONFIG=2: %v", got)
	}
}

func TestLimits(t *testing.T) {
	text := `model: big
constants: {N: 3000}
sets: {s: 1..N}
variables:
  x: {over: s}
equations:
  e: {for: i in s, eq: "x[i] = sum(j in 1..N, j)"}
`
	tests := []struct {
		opts *ExpandOptions
		want string
	}{
		{&ExpandOptions{MaxSetSize: 100}, "has 3000 members; the limit is 100"},
		{&ExpandOptions{MaxScalars: 1000}, "more than 1000 scalar quantities"},
		{&ExpandOptions{MaxNodes: 100000}, "more than 100000 expression nodes"},
	}
	for _, tc := range tests {
		f, err := Load("big.yaml", strings.NewReader(text))
		if err != nil {
			t.Fatal(err)
		}
		_, err = f.Expand(tc.opts)
		if err == nil || !strings.Contains(err.Error(), tc.want) {
			t.Errorf("%+v: error %v, want %q", tc.opts, err, tc.want)
		}
	}
}

func TestErrorList(t *testing.T) {
	var l ErrorList
	for i := 30; i > 0; i-- {
		l.Add(Pos{File: "a.yaml", Line: i, Col: 2}, "error %d", i)
		l.Add(Pos{File: "a.yaml", Line: i, Col: 5}, "second on line %d", i)
	}
	l.addNote(Pos{File: "a.yaml", Line: 3, Col: 2}, Pos{File: "a.yaml", Line: 1, Col: 1}, "other declaration")
	l.Sort()
	if len(l) != MaxErrors+1 || l[len(l)-1].Msg != "too many errors" {
		t.Fatalf("len %d, last %v", len(l), l[len(l)-1])
	}
	if l[0].Msg != "error 1" || l[3].Msg != "other declaration" || l[2].Msg != "error 3" {
		t.Errorf("order: %v / %v / %v", l[0], l[2], l[3])
	}
	if got := l.Error(); got != "a.yaml:1:2: error 1 (and 20 more errors)" {
		t.Errorf("Error() = %q", got)
	}
	if (ErrorList{}).Err() != nil {
		t.Error("empty list is a non-nil error")
	}
}

func TestPositions(t *testing.T) {
	// The position of an undefined name in each scalar style.
	tests := []struct {
		eq   string
		want string
	}{
		{"e: x = 2*zz", "t.yaml:5:12"},
		{"e: 'x = 2*zz'", "t.yaml:5:13"},
		{`e: "x = 2*zz"`, "t.yaml:5:13"},
		{`e: "x = \t2*zz"`, "t.yaml:5:15"},
		{"e: |\n    x = 2 *\n      zz", "t.yaml:7:7"},
		{"e: >\n    x = 2 *\n      zz", "t.yaml:7:7"},
		{"e: x = 2 *\n    zz", "t.yaml:6:5"},
		{`e: {for: "i in 1..2", eq: "x = zz"}`, "t.yaml:5:34"},
	}
	for _, tc := range tests {
		text := "model: t\nvariables:\n  x: {guess: 1}\nequations:\n  " + tc.eq + "\n"
		f, err := Load("t.yaml", strings.NewReader(text))
		if err == nil {
			_, err = f.Expand(nil)
		}
		if err == nil {
			t.Errorf("%q: no error", tc.eq)
			continue
		}
		l := err.(ErrorList)
		if got := l[0].Pos.String(); got != tc.want {
			t.Errorf("%q: error at %s, want %s (%v)", tc.eq, got, tc.want, err)
		}
	}
}

func BenchmarkExpandColumn(b *testing.B) {
	data, err := os.ReadFile("../testdata/models/column.yaml")
	if err != nil {
		b.Fatal(err)
	}
	f, err := Load("column.yaml", strings.NewReader(string(data)))
	if err != nil {
		b.Fatal(err)
	}
	b.ReportAllocs()
	for b.Loop() {
		if _, err := f.Expand(nil); err != nil {
			b.Fatal(err)
		}
	}
}

func BenchmarkLoadExpandColumn(b *testing.B) {
	data, err := os.ReadFile("../testdata/models/column.yaml")
	if err != nil {
		b.Fatal(err)
	}
	b.ReportAllocs()
	for b.Loop() {
		f, err := Load("column.yaml", strings.NewReader(string(data)))
		if err != nil {
			b.Fatal(err)
		}
		if _, err := f.Expand(nil); err != nil {
			b.Fatal(err)
		}
	}
}
