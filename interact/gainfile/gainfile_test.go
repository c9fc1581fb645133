package gainfile

import (
	"flag"
	"fmt"
	"os"
	"path/filepath"
	"strings"
	"testing"

	"github.com/loopwright/loopwright/interact"
	"gonum.org/v1/gonum/floats/scalar"
	"gonum.org/v1/gonum/mat"
)

var update = flag.Bool("update", false, "rewrite the golden files in testdata")

func TestWoodBerryFiles(t *testing.T) {
	for _, f := range []string{"wood-berry.csv", "wood-berry.yaml"} {
		g, err := Load(filepath.Join("testdata", f))
		if err != nil {
			t.Fatal(err)
		}
		// checkvalues §1 gains (Wood & Berry 1973) [C].
		want := mat.NewDense(2, 2, []float64{12.8, -18.9, 6.6, -19.4})
		if !mat.Equal(g.K, want) {
			t.Errorf("%s: K = %v", f, mat.Formatted(g.K))
		}
		if g.Outputs[0].Name != "xD" || g.Outputs[0].Unit != "wt%" || g.Inputs[1].Name != "S" || g.Inputs[1].Unit != "lb/min" {
			t.Errorf("%s: signals %+v %+v", f, g.Outputs, g.Inputs)
		}
		a, err := interact.Analyze(g, nil)
		if err != nil {
			t.Fatal(err)
		}
		// checkvalues §1: λ11 = 2.0094 [R].
		if l := a.RGA.At(0, 0); !scalar.EqualWithinRel(l, 2.0094, 5e-5) {
			t.Errorf("%s: λ11 = %g, want 2.0094 (checkvalues §1)", f, l)
		}
	}
}

// TestGolden renders every example file's analysis into a text golden file;
// go test -update rewrites them.
func TestGolden(t *testing.T) {
	for _, f := range []string{"wood-berry.csv", "wood-berry.yaml", "blend3.yaml"} {
		g, err := Load(filepath.Join("testdata", f))
		if err != nil {
			t.Fatal(err)
		}
		scaling := interact.ScaleNone
		if strings.HasSuffix(f, ".yaml") {
			scaling = interact.ScaleSpan
		}
		a, err := interact.Analyze(g, &interact.Options{Scaling: scaling, MaxPairings: 3})
		if err != nil {
			t.Fatal(err)
		}
		var b strings.Builder
		fmt.Fprintf(&b, "source %s, scaling %v\nK =\n%.5g\nRGA =\n%.5g\nγ = %.5g, γ* = %.5g\n%s\n", a.Source, a.Scaling,
			mat.Formatted(a.K, mat.Squeeze()), mat.Formatted(clean(a.RGA), mat.Squeeze()), a.SVD.Cond, a.MinCond, a.Method)
		for _, p := range a.Pairings {
			fmt.Fprintf(&b, "\n%s: %v, score %.4f, NI %.4f\n", p.Label, p.Verdict, p.Score, p.Niederlinski)
			for _, r := range p.Reasons {
				fmt.Fprintf(&b, "  - %s\n", r)
			}
		}
		golden := filepath.Join("testdata", f+".golden")
		if *update {
			if err := os.WriteFile(golden, []byte(b.String()), 0o644); err != nil {
				t.Fatal(err)
			}
		}
		want, err := os.ReadFile(golden)
		if err != nil {
			t.Fatalf("%v (run go test -update to create it)", err)
		}
		if b.String() != string(want) {
			t.Errorf("%s: analysis differs from %s:\n%s", f, golden, b.String())
		}
	}
}

// clean zeroes round-off (|v| < 1e-12) so the golden text does not depend
// on the last bits of floating-point arithmetic.
func clean(m *mat.Dense) *mat.Dense {
	var c mat.Dense
	c.Apply(func(_, _ int, v float64) float64 {
		if v > -1e-12 && v < 1e-12 {
			return 0
		}
		return v
	}, m)
	return &c
}

func TestBlend3(t *testing.T) {
	g, err := Load(filepath.Join("testdata", "blend3.yaml"))
	if err != nil {
		t.Fatal(err)
	}
	if r, c := g.Kd.Dims(); r != 3 || c != 2 || g.Disturbances[1].Name != "xconc" || g.Outputs[0].Span != 5 || g.Inputs[2].Nominal != 3 {
		t.Errorf("blend3: Kd %dx%d, signals %+v %+v", r, c, g.Outputs, g.Disturbances)
	}
}

func TestCSVErrors(t *testing.T) {
	for _, tc := range []struct {
		name, in, want string
	}{
		{"non-numeric", "g,R,S\nxD,12.8,abc\n", `m.csv:2:9: "abc" is not a number: write the gain as a decimal number such as -18.9 or 1.2e-3`},
		{"ragged", "g,R,S\nxD,12.8\n", "m.csv:2:1: this row has 2 cells but the first row has 3: give every output one gain per input"},
		{"duplicate input", "g,R,R\nxD,1,2\n", `m.csv:1:5: duplicate input name "R" (first on line 1): give each input its own name`},
		{"duplicate output", "g,R,S\nxD,1,2\nxD [wt%],3,4\n", `m.csv:3:1: duplicate output name "xD" (first on line 2): give each output its own name`},
		{"empty", "# only a comment\n\n", "m.csv:1:1: the file holds no gain matrix: write a row of input names, then one row per output"},
		{"header only", "# c\ng,R,S\n", "m.csv:2:1: no output rows after the input names: add one row per output, name first, then its gains"},
		{"one column", "g\nxD\n", "m.csv:1:1: the first row must list the input names after the first cell, separated by commas"},
		{"empty cell", "g,R\nxD,\n", "m.csv:2:4: empty gain: write 0 if the input does not move this output"},
		{"inf", "g,R\nxD,Inf\n", `m.csv:2:4: gain "Inf" is not finite: write a finite number`},
		{"unit bracket", "g,R [kg\nxD,1\n", `m.csv:1:5: unit of input "R [kg" has no closing ]: write it as name [unit]`},
		{"quote", "g,\"R\nxD,1\n", "m.csv:1: extraneous or missing \" in quoted-field: a quoted field starting on this line runs to line 2; check its quotes"},
		{"two errors", "g,R\nxD,a\nxB,b\n", `m.csv:2:4: "a" is not a number: write the gain as a decimal number such as -18.9 or 1.2e-3 (and 1 more errors)`},
	} {
		_, err := ReadCSV("m.csv", strings.NewReader(tc.in))
		if err == nil || err.Error() != tc.want {
			t.Errorf("%s:\n got %v\nwant %s", tc.name, err, tc.want)
		}
	}
}

func TestYAMLErrors(t *testing.T) {
	const ok = "outputs: {y1: {unit: m}, y2: }\ninputs: {u1: {span: 2}, u2: {}}\ngain: [[1, 2], [3, 4]]\n"
	if g, err := ReadYAML("m.yaml", strings.NewReader(ok)); err != nil || g.Inputs[0].Span != 2 || g.Outputs[0].Unit != "m" {
		t.Fatalf("valid file: %v %+v", err, g)
	}
	for _, tc := range []struct {
		name, in, want string
	}{
		{"unknown key", "outputs: {y: }\ninputs: {u: }\ngain: [[1]]\ngains: 2\n", `m.yaml:4:1: unknown key "gains": use about, outputs, inputs, disturbances, gain or disturbance_gain`},
		{"missing gain", "outputs: {y: }\ninputs: {u: }\n", "m.yaml:1:1: missing gain: one row of gains per output, one column per input"},
		{"rows", "outputs: {y1: , y2: }\ninputs: {u: }\ngain:\n  - [1]\n", "m.yaml:4:3: gain has 1 rows but there are 2 outputs: give one row per output, in the order listed"},
		{"ragged", "outputs: {y: }\ninputs: {u1: , u2: }\ngain:\n  - [1, 2, 3]\n", `m.yaml:4:5: row 1 of gain (output "y") has 3 numbers but there are 2 inputs: give one per input`},
		{"not a number", "outputs: {y: }\ninputs: {u: }\ngain: [[x1]]\n", `m.yaml:3:9: gain of y to u: "x1" is not a finite number`},
		{"bad span", "outputs: {y: {span: -1}}\ninputs: {u: }\ngain: [[1]]\n", `m.yaml:1:21: span of "y" must be positive: the expected range of the signal in its unit`},
		{"signal key", "outputs: {y: {units: m}}\ninputs: {u: }\ngain: [[1]]\n", `m.yaml:1:15: unknown key "units" for output "y": use unit, span or nominal`},
		{"duplicate", "outputs:\n  y: {}\n  y: {}\ninputs: {u: }\ngain: [[1]]\n", `m.yaml:3:3: duplicate output name "y" (first on line 2): give each output its own name`},
		{"dist gain missing", "outputs: {y: }\ninputs: {u: }\ndisturbances: {d: }\ngain: [[1]]\n", "m.yaml:3:15: disturbances are listed but disturbance_gain is missing: add one row per output, one column per disturbance"},
		{"syntax", "outputs: {y: \ninputs: [\n", "m.yaml:1: YAML syntax: did not find expected ',' or '}'"},
		{"empty", "", "m.yaml:1:1: the file is empty: give outputs, inputs and gain"},
		{"not a map", "- 1\n", "m.yaml:1:1: the file must be a mapping with outputs, inputs and gain"},
	} {
		_, err := ReadYAML("m.yaml", strings.NewReader(tc.in))
		if err == nil || err.Error() != tc.want {
			t.Errorf("%s:\n got %v\nwant %s", tc.name, err, tc.want)
		}
	}
}

func TestReadByExtension(t *testing.T) {
	if _, err := Read("gains.txt", strings.NewReader("")); err == nil || err.Error() != "gains.txt: unknown gain file type: name it .csv or .yaml" {
		t.Errorf("err = %v", err)
	}
	if _, err := Load(filepath.Join("testdata", "missing.csv")); err == nil {
		t.Error("missing file: no error")
	}
}

func checkGainSet(t *testing.T, g *interact.GainSet) {
	r, c := g.K.Dims()
	if r != len(g.Outputs) || c != len(g.Inputs) || r == 0 || c == 0 {
		t.Fatalf("K %dx%d for %d outputs and %d inputs", r, c, len(g.Outputs), len(g.Inputs))
	}
	if g.Kd != nil {
		if r2, c2 := g.Kd.Dims(); r2 != r || c2 != len(g.Disturbances) {
			t.Fatalf("Kd %dx%d for %d outputs and %d disturbances", r2, c2, r, len(g.Disturbances))
		}
	}
}

func FuzzReadCSV(f *testing.F) {
	f.Add([]byte("g,R,S\nxD,12.8,-18.9\nxB,6.6,-19.4\n"))
	f.Add([]byte("# c\n,\"a,b\",c [kg]\ny,1e3,-0\n"))
	f.Fuzz(func(t *testing.T, data []byte) {
		g, err := ReadCSV("fuzz.csv", strings.NewReader(string(data)))
		if err != nil {
			if !strings.HasPrefix(err.Error(), "fuzz.csv") {
				t.Fatalf("error without the file name: %v", err)
			}
			return
		}
		checkGainSet(t, g)
	})
}

func FuzzReadYAML(f *testing.F) {
	f.Add([]byte("outputs: {y1: {unit: m}, y2: }\ninputs: {u1: {span: 2}, u2: {}}\ngain: [[1, 2], [3, 4]]\n"))
	f.Add([]byte("outputs: {y: }\ninputs: {u: }\ndisturbances: {d: {span: 1}}\ngain: [[1]]\ndisturbance_gain: [[2]]\n"))
	f.Fuzz(func(t *testing.T, data []byte) {
		g, err := ReadYAML("fuzz.yaml", strings.NewReader(string(data)))
		if err != nil {
			if !strings.HasPrefix(err.Error(), "fuzz.yaml") {
				t.Fatalf("error without the file name: %v", err)
			}
			return
		}
		checkGainSet(t, g)
	})
}
