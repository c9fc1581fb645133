package plots

import (
	"bytes"
	"context"
	"flag"
	"math"
	"os"
	"path/filepath"
	"strings"
	"testing"

	"github.com/loopwright/loopwright/interact/sweep"
)

var update = flag.Bool("update", false, "rewrite the golden SVG files in testdata")

// plant is an invented 2x2 test plant, K = [[1, a], [b, 1]], λ11 = 1/(1-ab):
// the best pairing switches from diagonal to off-diagonal across a b = 1,
// where λ11 changes sign. Points with a > 1.5 and b > 1.0 "fail to converge".
type plant struct{}

func (plant) Point(_ context.Context, p []float64, _ sweep.State, rec *sweep.Record) (sweep.State, error) {
	a, b := p[0], p[1]
	rec.Iterations = 2
	if a > 1.5 && b > 1.0 {
		return sweep.State{}, errFail
	}
	l := 1 / (1 - a*b)
	rec.Outputs = []float64{a * b, 1}
	rec.K = []float64{1, a, b, 1}
	rec.RGA = []float64{l, 1 - l, 1 - l, l}
	rec.Det, rec.Cond = 1-a*b, 1
	rec.NI = []float64{1 - a*b, (1 - a*b) / (a * b)}
	rec.Pass = []bool{l > 0.5, 1-l > 0.5}
	rec.Best = "y1:u1 y2:u2"
	if l < 0.5 {
		rec.Best = "y1:u2 y2:u1"
	}
	return sweep.State{X: []float64{a * b}}, nil
}

type failErr struct{}

func (failErr) Error() string { return "no convergence (test plant)" }

var errFail = failErr{}

func data(t *testing.T, d sweep.Design) *Data {
	t.Helper()
	axes := []sweep.Axis{
		{Name: "a", Param: 0, From: 0.2, To: 1.6, Points: 8, Nominal: 0.5, Unit: "kg/h", Scale: 1.0 / 3600},
		{Name: "b", Param: 1, From: 0.1, To: 1.1, Points: 6, Nominal: 0.5, Log: true},
	}
	plan, err := sweep.NewPlan(axes, d)
	if err != nil {
		t.Fatal(err)
	}
	h := &sweep.Header{Format: sweep.FormatVersion, Model: "test-plant", Axes: axes, Design: d, Total: plan.Len(),
		Outputs: []sweep.Quantity{{Name: "y1"}, {Name: "y2"}}, Inputs: []sweep.Quantity{{Name: "u1"}, {Name: "u2"}},
		Pairings: []sweep.Pairing{{Label: "P1", Name: "y1:u1 y2:u2", Role: "nominal best", Input: []int{0, 1}},
			{Label: "P2", Name: "y1:u2 y2:u1", Role: "alternative", Input: []int{1, 0}}}}
	prob := &sweep.Problem{Header: h, Plan: plan, Nominal: []float64{0.5, 0.5}, Start: []float64{0.25},
		NewWorker: func() sweep.Worker { return plant{} }}
	var recs []sweep.Record
	if err := sweep.Run(context.Background(), prob, nil, func(r *sweep.Record) error { recs = append(recs, *r); return nil }); err != nil {
		t.Fatal(err)
	}
	dd, err := NewData(h, recs)
	if err != nil {
		t.Fatal(err)
	}
	return dd
}

func TestPlotsGolden(t *testing.T) {
	for _, tc := range []struct {
		name   string
		design sweep.Design
		want   []string
	}{
		{"grid", sweep.Design{}, []string{"heatmap-b-a.svg", "lambda-a.svg", "lambda-b.svg"}},
		{"lhs", sweep.Design{Kind: sweep.LHS, Points: 40, Seed: 2}, []string{"lambda-a.svg", "lambda-b.svg"}},
	} {
		d := data(t, tc.design)
		var names []string
		for _, f := range d.Files() {
			names = append(names, f.Name)
			var a, b bytes.Buffer
			if err := f.Draw(&a); err != nil {
				t.Fatalf("%s %s: %v", tc.name, f.Name, err)
			}
			if err := f.Draw(&b); err != nil {
				t.Fatal(err)
			}
			if !bytes.Equal(a.Bytes(), b.Bytes()) {
				t.Errorf("%s %s: two drawings differ: SVG not deterministic", tc.name, f.Name)
			}
			if !strings.HasPrefix(a.String(), "<?xml") || !strings.Contains(a.String(), "</svg>") {
				t.Errorf("%s %s: not an SVG document", tc.name, f.Name)
			}
			golden := filepath.Join("testdata", tc.name+"-"+f.Name)
			if *update {
				os.MkdirAll("testdata", 0o755)
				if err := os.WriteFile(golden, a.Bytes(), 0o644); err != nil {
					t.Fatal(err)
				}
				continue
			}
			want, err := os.ReadFile(golden)
			if err != nil {
				t.Fatalf("%v (run go test -update to create it)", err)
			}
			if !bytes.Equal(a.Bytes(), want) {
				t.Errorf("%s differs from the golden file; inspect it and run go test -update if the change is intended", golden)
			}
		}
		if strings.Join(names, " ") != strings.Join(tc.want, " ") {
			t.Errorf("%s: files %v, want %v", tc.name, names, tc.want)
		}
	}
}

// The switch boundary lies on the edges between cells whose best pairing
// differs, and only there.
func TestBoundaryOnSwitches(t *testing.T) {
	d := data(t, sweep.Design{})
	g := d.grid(1, 0)
	b := g.boundary()
	if len(b.segs) == 0 {
		t.Fatal("no boundary drawn, but the best pairing switches across a b = 1")
	}
	xe, ye := edges(g.xs), edges(g.ys)
	for _, s := range b.segs {
		// every segment lies on a cell edge
		onX := s[0] == s[2] && contains(xe, s[0])
		onY := s[1] == s[3] && contains(ye, s[1])
		if !onX && !onY {
			t.Errorf("segment %v is not on a cell edge", s)
		}
	}
	// Count the switches directly.
	n := 0
	for r := range g.ys {
		for c := range g.xs {
			if c+1 < len(g.xs) && g.ok[r][c] && g.ok[r][c+1] && g.best[r][c] != g.best[r][c+1] {
				n++
			}
			if r+1 < len(g.ys) && g.ok[r][c] && g.ok[r+1][c] && g.best[r][c] != g.best[r+1][c] {
				n++
			}
		}
	}
	if n != len(b.segs) {
		t.Errorf("%d segments for %d switches", len(b.segs), n)
	}
}

func contains(v []float64, x float64) bool {
	for _, e := range v {
		if math.Abs(e-x) < 1e-12 {
			return true
		}
	}
	return false
}

// Points that did not converge split the λ line instead of joining across.
func TestLineSplitsAtFailures(t *testing.T) {
	d := data(t, sweep.Design{})
	for k := range d.Header.Pairings {
		for _, seg := range d.lineSegments(0, k) {
			for _, p := range seg {
				if math.IsNaN(p.Y) {
					t.Fatal("NaN in a line segment")
				}
			}
		}
	}
}
