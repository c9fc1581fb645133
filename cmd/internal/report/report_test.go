package report

import (
	"bytes"
	"context"
	"errors"
	"flag"
	"fmt"
	"os"
	"path/filepath"
	"regexp"
	"strings"
	"testing"

	"gonum.org/v1/gonum/mat"

	"github.com/loopwright/loopwright/cmd/internal/pipeline"
	"github.com/loopwright/loopwright/cmd/internal/plots"
	"github.com/loopwright/loopwright/interact"
	"github.com/loopwright/loopwright/interact/sweep"
	"github.com/loopwright/loopwright/model"
)

var update = flag.Bool("update", false, "rewrite the golden HTML files in testdata")

// mixerInput runs the real pipeline (compile, Newton, gains, analysis) on
// the invented three-stream mixer of testdata/mixer.yaml.
func mixerInput(t testing.TB, scaling interact.Scaling) *Input {
	t.Helper()
	file, err := model.LoadFile(filepath.Join("testdata", "mixer.yaml"))
	if err != nil {
		t.Fatal(err)
	}
	sys, err := file.Expand(nil)
	if err != nil {
		t.Fatal(err)
	}
	pt, err := pipeline.Operate(context.Background(), sys, nil)
	if err != nil {
		t.Fatal(err)
	}
	g, err := pt.Gains()
	if err != nil {
		t.Fatal(err)
	}
	a, err := pipeline.Analyze(g, &interact.Options{Scaling: scaling, MaxPairings: -1})
	if err != nil {
		t.Fatal(err)
	}
	checks := make([]float64, len(sys.Checks))
	if err := pt.Prog.NewEval().Checks(checks, pt.X, pt.P); err != nil {
		t.Fatal(err)
	}
	return &Input{
		System: sys, Generator: "loopwright (test)",
		Solve:   pt.Result,
		Point:   &Point{X: pt.X, Outputs: pt.Outputs, Defines: pt.Defines, Checks: checks},
		Scaling: scaling, Gains: g, Analysis: a,
	}
}

// mixerPlant is the mixer's operating point in closed form (the three
// balances solved by hand), for the sweep fixture: outputs F, x_a, x_b,
// inputs f_a, f_b, f_w at their nominal values, w_a swept.
type mixerPlant struct{ h *sweep.Header }

func (m mixerPlant) Point(_ context.Context, p []float64, _ sweep.State, rec *sweep.Record) (sweep.State, error) {
	const fa, fb, fw, wb, aInB, bInA = 1500.0, 1000.0, 2500.0, 0.40, 0.10, 0.05
	wa := p[0]
	F := fa + fb + fw
	xa, xb := (fa*wa+fb*aInB)/F, (fb*wb+fa*bInA)/F
	// d x/d f_j = (content of stream j - x)/F for each fraction x.
	k := mat.NewDense(3, 3, []float64{
		1, 1, 1,
		(wa - xa) / F, (aInB - xa) / F, -xa / F,
		(bInA - xb) / F, (wb - xb) / F, -xb / F,
	})
	sig := func(names ...string) []interact.Signal {
		s := make([]interact.Signal, len(names))
		for i, n := range names {
			s[i] = interact.Signal{Name: n, Scale: 1}
		}
		return s
	}
	g := &interact.GainSet{Outputs: sig("f_out", "x_a", "x_b"), Inputs: sig("f_a", "f_b", "f_w"), K: k}
	a, err := interact.Analyze(g, &interact.Options{MaxPairings: -1})
	if err != nil {
		return sweep.State{X: []float64{F, xa, xb}}, err
	}
	rec.Iterations = 1
	rec.Outputs = []float64{F, xa, xb}
	rec.K = append([]float64(nil), k.RawMatrix().Data...)
	rec.RGA = append([]float64(nil), a.RGA.RawMatrix().Data...)
	rec.Det, rec.Cond = a.Det, a.SVD.Cond
	for _, pr := range m.h.Pairings {
		rec.NI = append(rec.NI, interact.Niederlinski(k, pr.Input))
		pass := false
		for _, r := range a.Pairings {
			if slicesEqual(r.Pairs, pr.Input) {
				pass = r.Verdict == interact.Recommended || r.Verdict == interact.Acceptable
			}
		}
		rec.Pass = append(rec.Pass, pass)
	}
	if top := topPairing(a); top != nil && top.Verdict != interact.Cautioned {
		rec.Best = sweep.PairingName(m.h.Outputs, m.h.Inputs, top.Pairs)
	}
	return sweep.State{X: []float64{F, xa, xb}}, nil
}

func slicesEqual(a interact.Pairing, b []int) bool {
	if len(a) != len(b) {
		return false
	}
	for i := range a {
		if a[i] != b[i] {
			return false
		}
	}
	return true
}

// mixerSweep runs the real sweep engine, summary and plots over w_a with
// the closed-form mixer.
func mixerSweep(t testing.TB, in *Input) *Sweep {
	t.Helper()
	sys := in.System
	ax := sys.Envelope[0]
	axes := []sweep.Axis{{Name: sys.Params[ax.Param].Name, Param: 0, From: ax.From, To: ax.To, Points: ax.Points, Nominal: sys.Params[ax.Param].Value}}
	plan, err := sweep.NewPlan(axes, sweep.Design{})
	if err != nil {
		t.Fatal(err)
	}
	q := func(s []interact.Signal) []sweep.Quantity {
		out := make([]sweep.Quantity, len(s))
		for i, x := range s {
			out[i] = sweep.Quantity{Name: x.Name, Unit: x.Unit}
		}
		return out
	}
	h := &sweep.Header{Format: sweep.FormatVersion, Model: sys.Name, Axes: axes, Design: plan.Design, Total: plan.Len(),
		Outputs: q(in.Gains.Outputs), Inputs: q(in.Gains.Inputs), Caution: interact.Caution}
	for i, r := range in.Analysis.Pairings[:2] {
		role := "nominal best"
		if i > 0 {
			role = "alternative"
		}
		h.Pairings = append(h.Pairings, sweep.Pairing{Label: fmt.Sprintf("P%d", i+1), Name: sweep.PairingName(h.Outputs, h.Inputs, r.Pairs), Role: role, Input: r.Pairs})
	}
	prob := &sweep.Problem{Header: h, Plan: plan, Nominal: []float64{ax.From}, Start: []float64{0},
		NewWorker: func() sweep.Worker { return mixerPlant{h} }}
	var recs []sweep.Record
	if err := sweep.Run(context.Background(), prob, &sweep.Options{Workers: 1}, func(r *sweep.Record) error {
		recs = append(recs, *r)
		return nil
	}); err != nil {
		t.Fatal(err)
	}
	sum, err := sweep.Summarize(h, recs)
	if err != nil {
		t.Fatal(err)
	}
	d, err := plots.NewData(h, recs)
	if err != nil {
		t.Fatal(err)
	}
	ps, err := PlotsOf(d)
	if err != nil {
		t.Fatal(err)
	}
	sw := &Sweep{Summary: sum, Plots: ps}
	return sw
}

func renderHTML(t testing.TB, in *Input) []byte {
	t.Helper()
	var b bytes.Buffer
	if err := Write(&b, in); err != nil {
		t.Fatal(err)
	}
	return b.Bytes()
}

func TestGolden(t *testing.T) {
	for _, tc := range []struct {
		name    string
		scaling interact.Scaling
		sweep   bool
	}{
		{"mixer-span", interact.ScaleSpan, true},
		{"mixer-none", interact.ScaleNone, false},
	} {
		t.Run(tc.name, func(t *testing.T) {
			in := mixerInput(t, tc.scaling)
			if tc.sweep {
				in.Sweep = mixerSweep(t, in)
			}
			got := renderHTML(t, in)
			golden := filepath.Join("testdata", tc.name+".html")
			if *update {
				if err := os.WriteFile(golden, got, 0o644); err != nil {
					t.Fatal(err)
				}
				return
			}
			want, err := os.ReadFile(golden)
			if err != nil {
				t.Fatalf("%v (run go test -update to create it)", err)
			}
			if !bytes.Equal(got, want) {
				t.Errorf("%s differs from the golden file; inspect it and run go test -update if the change is intended", golden)
			}
		})
	}
}

func TestDeterministic(t *testing.T) {
	in := mixerInput(t, interact.ScaleSpan)
	in.Sweep = mixerSweep(t, in)
	a := renderHTML(t, in)
	b := renderHTML(t, mixerInputWithSweep(t))
	if !bytes.Equal(a, b) {
		t.Error("two reports of the same inputs differ")
	}
}

func mixerInputWithSweep(t *testing.T) *Input {
	in := mixerInput(t, interact.ScaleSpan)
	in.Sweep = mixerSweep(t, in)
	return in
}

// TestSelfContained checks the report fetches nothing and runs nothing.
func TestSelfContained(t *testing.T) {
	html := string(renderHTML(t, mixerInputWithSweep(t)))
	for _, bad := range []string{"<script", "<link", "<iframe", "<img", "src=", "http://", "https://", "@import", "url("} {
		if strings.Contains(html, bad) {
			t.Errorf("report contains %q", bad)
		}
	}
	if n := strings.Count(html, "<svg"); n != 1 {
		t.Errorf("%d inline SVG plots, want 1 (λ along w_a)", n)
	}
	if strings.Contains(html, "<?xml") {
		t.Error("an XML prolog was inlined")
	}
	for _, want := range []string{`id="caution"`, interact.Caution[:40], "@media print", `id="rga"`, `id="pairings"`, `id="gain-k"`, `id="gain-kd"`, `id="gain-k-scaled"`, `id="integrity-1"`, `id="sensitivity"`, `id="rdg-1"`, `id="envelope-pairings"`, `id="variables"`, `id="inputs"`, `id="disturbances"`} {
		if !strings.Contains(html, want) {
			t.Errorf("report lacks %q", want)
		}
	}
}

// TestEscaping feeds markup through every kind of model string.
func TestEscaping(t *testing.T) {
	in := mixerInput(t, interact.ScaleSpan)
	const evil = `<script>alert("x")</script>&<b onmouseover=1>`
	in.System.Name = evil
	in.System.About = evil
	in.System.File = evil
	in.System.Params[0].Note = evil
	in.System.Unknowns[0].Note = evil
	in.Gains.Outputs[0].Name = evil
	in.Analysis.Pairings[0].Reasons = append(in.Analysis.Pairings[0].Reasons, evil)
	in.Sweep = &Sweep{Note: evil}
	html := string(renderHTML(t, in))
	if strings.Contains(html, "<script") || strings.Contains(html, "<b onmouseover") {
		t.Fatal("model text reached the HTML unescaped")
	}
	if !strings.Contains(html, "&lt;script&gt;alert(&#34;x&#34;)&lt;/script&gt;&amp;") {
		t.Error("escaped model text missing")
	}
}

// TestRGAShownAsComputed: every RGA cell shows interact's value with the
// band of its distance from 1, and exactly the top pairing's cells are
// marked as paired.
func TestRGAShownAsComputed(t *testing.T) {
	in := mixerInput(t, interact.ScaleNone)
	a := in.Analysis
	html := string(renderHTML(t, in))
	rga := section(t, html, `<div class="tbl" id="rga">`, `</table>`)
	cells := regexp.MustCompile(`<td class="num rga (l\d|lneg)( paired)?"[^>]*>(?:<span class="pre"[^>]*>▸</span>)?(?:<strong>)?([^<]+)`).FindAllStringSubmatch(rga, -1)
	n := len(a.Outputs)
	if len(cells) != n*n {
		t.Fatalf("%d RGA cells, want %d", len(cells), n*n)
	}
	top := topPairing(a)
	for k, c := range cells {
		i, j := k/n, k%n
		l := a.RGA.At(i, j)
		if c[3] != fmtLambda(l) {
			t.Errorf("λ[%d,%d] shown %q, computed %v", i, j, c[3], l)
		}
		if c[1] != bandOf(l).Class {
			t.Errorf("λ[%d,%d] = %v in band %s, want %s", i, j, l, c[1], bandOf(l).Class)
		}
		if paired := c[2] != ""; paired != (top.Pairs[i] == j) {
			t.Errorf("λ[%d,%d] paired mark %v, top pairing %v", i, j, paired, top.Pairs)
		}
	}
}

func fmtLambda(l float64) string { return lambdaCell(l, false).Text }

func section(t *testing.T, s, from, to string) string {
	t.Helper()
	i := strings.Index(s, from)
	if i < 0 {
		t.Fatalf("no %q in the report", from)
	}
	j := strings.Index(s[i:], to)
	if j < 0 {
		t.Fatalf("no %q after %q", to, from)
	}
	return s[i : i+j]
}

// TestWoodBerry renders the published Wood & Berry column gains
// (checkvalues.md §1: G(0) = [12.8 -18.9; 6.6 -19.4], λ11 = 2.0094 [R],
// published "2.01" [C]) and checks the report shows λ11 = 2.01 on the
// diagonal pairing and -1.01 hatched as negative off the diagonal.
func TestWoodBerry(t *testing.T) {
	g := &interact.GainSet{
		Outputs: []interact.Signal{{Name: "xD", Unit: "wt%", Scale: 1}, {Name: "xB", Unit: "wt%", Scale: 1}},
		Inputs:  []interact.Signal{{Name: "R", Unit: "lb/min", Scale: 1}, {Name: "S", Unit: "lb/min", Scale: 1}},
		K:       mat.NewDense(2, 2, []float64{12.8, -18.9, 6.6, -19.4}),
	}
	a, err := interact.Analyze(g, nil)
	if err != nil {
		t.Fatal(err)
	}
	sys := &model.System{Name: "wood-berry", File: "checkvalues §1"}
	html := string(renderHTML(t, &Input{System: sys, Gains: g, Analysis: a, AnalysisErr: nil}))
	rga := section(t, html, `<div class="tbl" id="rga">`, `</table>`)
	for _, want := range []string{
		`<td class="num rga l3 paired" title="paired in the top-ranked pairing"><span class="pre" aria-hidden="true">▸</span><strong>2.01</strong><span class="mark">◕</span></td>`,
		`<td class="num rga lneg">-1.01<span class="mark">✕</span></td>`,
	} {
		if !strings.Contains(rga, want) {
			t.Errorf("RGA table lacks %s\n%s", want, rga)
		}
	}
	if !strings.Contains(html, "xD-R, xB-S") {
		t.Error("the diagonal pairing xD-R, xB-S is not named")
	}
	// NI = 1/λ11 = 0.49766 [R].
	if !strings.Contains(html, "<td class=\"num\">0.4977</td>") {
		t.Error("Niederlinski index 0.4977 not shown")
	}
}

func TestMissingParts(t *testing.T) {
	in := mixerInput(t, interact.ScaleNone)
	in.Point, in.Solve, in.Gains, in.Analysis = nil, nil, nil, nil
	in.SolveErr = errors.New("Newton stopped: iteration limit")
	in.AnalysisErr = errors.New("no operating point")
	html := string(renderHTML(t, in))
	for _, want := range []string{"The operating point was not found: Newton stopped: iteration limit", "The gains were not computed: no operating point", "No interaction analysis", `id="caution"`} {
		if !strings.Contains(html, want) {
			t.Errorf("report lacks %q", want)
		}
	}
}

func TestInlineSVG(t *testing.T) {
	for _, tc := range []struct {
		in, want string
		ok       bool
	}{
		{`<?xml version="1.0"?>` + "\n<!-- by -->\n" + `<svg width="432pt" height="288pt" viewBox="0 0 432 288"><path d="M0,0"/></svg>`, `<svg role="img" viewBox="0 0 432 288"><path d="M0,0"/></svg>`, true},
		{`<svg viewBox="0 0 1 1"><script>alert(1)</script></svg>`, "", false},
		{`<svg viewBox="0 0 1 1" onload="x()"></svg>`, "", false},
		{`<svg><image xlink:href="https://example.invalid/x.png"/></svg>`, "", false},
		{`<svg><image xlink:href="data:image/png;base64,AAAA"/></svg>`, `<svg><image xlink:href="data:image/png;base64,AAAA"/></svg>`, true},
		{`<html></html>`, "", false},
	} {
		got, ok := inlineSVG([]byte(tc.in))
		if ok != tc.ok || string(got) != tc.want {
			t.Errorf("inlineSVG(%q) = %q, %v; want %q, %v", tc.in, got, ok, tc.want, tc.ok)
		}
	}
}

func TestBands(t *testing.T) {
	for _, tc := range []struct {
		l    float64
		want string
	}{
		{1, "l0"}, {1.25, "l0"}, {0.75, "l0"}, {0.7, "l1"}, {1.5, "l1"}, {0.2, "l2"}, {0, "l2"}, {2, "l2"},
		{2.01, "l3"}, {4, "l3"}, {4.5, "l4"}, {35.07, "l4"}, {-0.01, "lneg"}, {-34.1, "lneg"},
	} {
		if got := bandOf(tc.l).Class; got != tc.want {
			t.Errorf("band of λ = %v: %s, want %s", tc.l, got, tc.want)
		}
	}
}

func BenchmarkWrite(b *testing.B) {
	in := mixerInput(b, interact.ScaleSpan)
	in.Sweep = mixerSweep(b, in)
	var buf bytes.Buffer
	for b.Loop() {
		buf.Reset()
		if err := Write(&buf, in); err != nil {
			b.Fatal(err)
		}
	}
}
