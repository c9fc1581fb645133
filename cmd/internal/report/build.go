package report

import (
	"fmt"
	"math"
	"sort"
	"strings"

	"gonum.org/v1/gonum/mat"

	"github.com/loopwright/loopwright/cmd/internal/render"
	"github.com/loopwright/loopwright/interact"
	"github.com/loopwright/loopwright/interact/sweep"
	"github.com/loopwright/loopwright/model"
)

// The report's view of the results: strings and classes only, so the
// template does no arithmetic and html/template escapes everything.

type document struct {
	Name, File, Generator, About string
	Caution                      string

	Glance   []fact    // the findings that matter most, at the top
	Headline *pairLine // the best pairing, nil without analysis

	Counts                                 []fact
	Inputs, Outputs, Disturbances, Params  *table
	Warnings                               []string
	SolveLine                              message
	Variables, OutputValues, Defines, Chks *table

	GainMsg            *message
	GainTables         []*table
	ScalingNote        string
	Conditioning       []fact
	Selection          *table
	SelectionReasons   []string
	RGA                *table
	RGALegend          []legendItem
	RGAPairNote        string
	Ranking            *table
	RankingNote        string
	Details            []pairDetail
	Integrity          []*table
	IntegrityNote      string
	Sensitivity        *table
	RDG                []*table
	RDGNote            string
	AnalysisNotes      []string
	Envelope           *envelope
	Thresholds         []fact
	HasAnalysis        bool
	NoAnalysisMessages []message
}

type fact struct{ Label, Value, Class string }

type message struct{ Text, Class string }

type pairLine struct {
	Label, Verdict, VerdictClass string
	Lambdas, NI                  string
}

type pairDetail struct {
	Rank                 int
	ID                   string
	Label                string
	Verdict, VerdictCls  string
	Reasons              []string
	FailedIntegrityCount int
}

type legendItem struct{ Class, Mark, Text string }

type envelope struct {
	Note      string
	Facts     []fact
	Axes      *table
	Pairings  *table
	Switches  *table
	Singular  *table
	Failed    *table
	Outside   *table
	BestShare *table
	Plots     []plotView
}

type plotView struct {
	Title string
	SVG   any // template.HTML after sanitising
}

// table is a table of the report. Matrix tables have a row header column.
type table struct {
	ID, Caption string
	Corner      string // the top-left cell of a matrix
	Cols        []col
	Rows        []row
	Notes       []string
	Matrix      bool
	Class       string
}

type col struct {
	Name, Unit string
	Num        bool
}

type row struct {
	Head  *cell // the row header of a matrix
	Cells []cell
	Class string
}

type cell struct {
	Text, Unit string
	Num        bool
	Class      string
	Pre        string // a marker before the text ("▸" on a paired element)
	Mark       string // a text marker after the text that reads without colour
	Strong     bool
	Title      string // tooltip
}

const sig = 4 // significant digits of ordinary numbers

func num(v float64) string {
	if math.IsNaN(v) {
		return "–"
	}
	return render.Num(v, sig)
}

func numCell(v float64) cell { return cell{Text: num(v), Num: true} }

func textCell(s string) cell { return cell{Text: s} }

// display converts SI to the symbol's display unit.
func display(u model.Unit, si float64) float64 { return u.FromSI(si) }

// rangeText prints a [min, max] pair in display units ("" when unbounded).
func rangeText(u model.Unit, lo, hi float64) (string, string) {
	f := func(v float64) string {
		if math.IsInf(v, 0) {
			return ""
		}
		return num(u.FromSI(v))
	}
	return f(lo), f(hi)
}

func build(in *Input) (*document, error) {
	sys := in.System
	d := &document{
		Name:      sys.Name,
		File:      sys.File,
		Generator: in.Generator,
		About:     strings.TrimSpace(sys.About),
		Caution:   interact.Caution,
	}
	if d.Generator == "" {
		d.Generator = "loopwright"
	}
	buildModel(d, sys)
	buildPoint(d, in)
	buildGains(d, in)
	if in.Analysis != nil {
		d.HasAnalysis = true
		buildAnalysis(d, in)
	}
	d.Envelope = buildEnvelope(in.Sweep)
	buildGlance(d, in)
	d.Thresholds = thresholdFacts()
	return d, nil
}

func buildModel(d *document, sys *model.System) {
	var nIn, nDist, nPar int
	for _, p := range sys.Params {
		switch p.Role {
		case model.RoleInput:
			nIn++
		case model.RoleDisturbance:
			nDist++
		default:
			nPar++
		}
	}
	d.Counts = []fact{
		{Label: "Unknowns", Value: fmt.Sprint(len(sys.Unknowns))},
		{Label: "Equations", Value: fmt.Sprint(len(sys.Equations))},
		{Label: "Degrees of freedom", Value: fmt.Sprint(len(sys.Unknowns) - len(sys.Equations))},
		{Label: "Inputs (manipulated)", Value: fmt.Sprint(nIn)},
		{Label: "Outputs (controlled)", Value: fmt.Sprint(len(sys.Outputs))},
		{Label: "Disturbances", Value: fmt.Sprint(nDist)},
		{Label: "Fixed parameters", Value: fmt.Sprint(nPar)},
	}
	if len(sys.Unknowns) != len(sys.Equations) {
		d.Counts[2].Class = "bad"
	}
	d.Inputs = paramTable("inputs", "Manipulated inputs", sys, sys.Inputs, true)
	d.Disturbances = paramTable("disturbances", "Disturbances", sys, sys.Disturbances, true)
	var fixed []int
	for i, p := range sys.Params {
		if p.Role == model.RoleParameter {
			fixed = append(fixed, i)
		}
	}
	d.Params = paramTable("parameters", "Fixed parameters (assumptions of the model)", sys, fixed, false)

	t := &table{ID: "outputs", Caption: "Controlled outputs", Cols: []col{{Name: "output"}, {Name: "unit"}, {Name: "span", Num: true}}}
	for _, o := range sys.Outputs {
		span := ""
		if o.Span > 0 {
			span = num(o.Span / o.Unit.DiffScale())
		}
		t.Rows = append(t.Rows, row{Cells: []cell{textCell(o.Name), textCell(unitText(o.Unit)), {Text: span, Num: true}}})
	}
	if len(t.Rows) > 0 {
		t.Notes = []string{"Span: the range over which the output is expected to move in operation, used by span scaling."}
		d.Outputs = t
	}
	for _, w := range sortedWarnings(sys.Warnings) {
		d.Warnings = append(d.Warnings, w.String())
	}
}

func unitText(u model.Unit) string {
	if u.Text == "" {
		return "–"
	}
	return u.Text
}

func paramTable(id, caption string, sys *model.System, idx []int, withSpan bool) *table {
	if len(idx) == 0 {
		return nil
	}
	t := &table{ID: id, Caption: caption, Cols: []col{{Name: "name"}, {Name: "nominal", Num: true}, {Name: "unit"}, {Name: "min", Num: true}, {Name: "max", Num: true}}}
	if withSpan {
		t.Cols = append(t.Cols, col{Name: "span", Num: true})
	}
	t.Cols = append(t.Cols, col{Name: "note"})
	for _, i := range idx {
		p := sys.Params[i]
		lo, hi := rangeText(p.Unit, p.Min, p.Max)
		cells := []cell{textCell(p.Name), numCell(display(p.Unit, p.Value)), textCell(unitText(p.Unit)), {Text: lo, Num: true}, {Text: hi, Num: true}}
		if withSpan {
			span := ""
			if p.Span > 0 {
				span = num(p.Span / p.Unit.DiffScale())
			}
			cells = append(cells, cell{Text: span, Num: true})
		}
		cells = append(cells, cell{Text: p.Note, Class: "note"})
		t.Rows = append(t.Rows, row{Cells: cells})
	}
	return t
}

func sortedWarnings(ws []model.Warning) []model.Warning {
	w := append([]model.Warning(nil), ws...)
	sort.SliceStable(w, func(i, j int) bool {
		if w[i].Pos.Line != w[j].Pos.Line {
			return w[i].Pos.Line < w[j].Pos.Line
		}
		return w[i].Pos.Col < w[j].Pos.Col
	})
	return w
}

func buildPoint(d *document, in *Input) {
	sys := in.System
	switch {
	case in.SolveErr != nil:
		d.SolveLine = message{Text: "The operating point was not found: " + in.SolveErr.Error(), Class: "bad"}
	case in.Solve != nil:
		r := in.Solve
		d.SolveLine = message{Text: fmt.Sprintf("Solved by %s: %s after %d iteration%s, largest scaled residual %s (%d block%s).",
			r.Method, r.Status, r.Iterations, plural(r.Iterations), num(r.ScaledResidualNorm), r.Blocks, plural(r.Blocks))}
	case in.Point == nil:
		d.SolveLine = message{Text: "The operating point was not computed.", Class: "bad"}
	}
	pt := in.Point
	if pt == nil {
		return
	}
	if len(pt.X) == len(sys.Unknowns) {
		t := &table{ID: "variables", Caption: "Variables at the operating point", Cols: []col{{Name: "variable"}, {Name: "value", Num: true}, {Name: "unit"}, {Name: "min", Num: true}, {Name: "max", Num: true}, {Name: "note"}}}
		for i, u := range sys.Unknowns {
			lo, hi := rangeText(u.Unit, u.Min, u.Max)
			t.Rows = append(t.Rows, row{Cells: []cell{textCell(u.Name), numCell(display(u.Unit, pt.X[i])), textCell(unitText(u.Unit)), {Text: lo, Num: true}, {Text: hi, Num: true}, {Text: u.Note, Class: "note"}}})
		}
		d.Variables = t
	}
	d.OutputValues = valueTable("output-values", "Outputs at the operating point", "output", sys.Outputs, pt.Outputs)
	d.Defines = valueTable("defines", "Defined quantities at the operating point", "quantity", sys.Defines, pt.Defines)
	if len(pt.Checks) == len(sys.Checks) && len(sys.Checks) > 0 {
		t := &table{ID: "checks", Caption: "Range checks", Cols: []col{{Name: "check"}, {Name: "value", Num: true}, {Name: "unit"}, {Name: "min", Num: true}, {Name: "max", Num: true}, {Name: "result"}, {Name: "note"}}}
		for i, c := range sys.Checks {
			lo, hi := rangeText(c.Unit, c.Min, c.Max)
			v := pt.Checks[i]
			res := cell{Text: "within range", Class: "ok"}
			if math.IsNaN(v) || v < c.Min || v > c.Max {
				res = cell{Text: "OUTSIDE range", Class: "bad", Strong: true}
			}
			t.Rows = append(t.Rows, row{Cells: []cell{textCell(c.Name), numCell(display(c.Unit, v)), textCell(unitText(c.Unit)), {Text: lo, Num: true}, {Text: hi, Num: true}, res, {Text: c.Note, Class: "note"}}})
		}
		d.Chks = t
	}
}

func valueTable(id, caption, what string, outs []model.Output, vals []float64) *table {
	if len(outs) == 0 || len(vals) != len(outs) {
		return nil
	}
	t := &table{ID: id, Caption: caption, Cols: []col{{Name: what}, {Name: "value", Num: true}, {Name: "unit"}}}
	for i, o := range outs {
		t.Rows = append(t.Rows, row{Cells: []cell{textCell(o.Name), numCell(display(o.Unit, vals[i])), textCell(unitText(o.Unit))}})
	}
	return t
}

func plural(n int) string {
	if n == 1 {
		return ""
	}
	return "s"
}

// matrixTable lays out m with the signals as row and column headers.
func matrixTable(id, caption, corner string, m mat.Matrix, rows, cols []interact.Signal, withUnits bool) *table {
	t := &table{ID: id, Caption: caption, Corner: corner, Matrix: true}
	for _, c := range cols {
		h := col{Name: c.Name, Num: true}
		if withUnits {
			h.Unit = c.Unit
		}
		t.Cols = append(t.Cols, h)
	}
	for i, r := range rows {
		h := cell{Text: r.Name}
		if withUnits {
			h.Unit = r.Unit
		}
		rw := row{Head: &h}
		for j := range cols {
			rw.Cells = append(rw.Cells, numCell(m.At(i, j)))
		}
		t.Rows = append(t.Rows, rw)
	}
	return t
}

func buildGains(d *document, in *Input) {
	if in.Gains == nil {
		msg := "The gains were not computed"
		if in.AnalysisErr != nil {
			msg += ": " + in.AnalysisErr.Error()
		} else {
			msg += " (no operating point)."
		}
		d.GainMsg = &message{Text: msg, Class: "bad"}
		return
	}
	g := in.Gains
	unitsNote := "Each element is the steady-state change of the row's output per unit change of the column's input, all other inputs held: units [row unit]/[column unit]."
	k := matrixTable("gain-k", "K: gains of the outputs to the inputs, engineering units", "output \\ input", g.K, g.Outputs, g.Inputs, true)
	k.Notes = []string{unitsNote}
	d.GainTables = append(d.GainTables, k)
	if g.Kd != nil {
		kd := matrixTable("gain-kd", "Kd: gains of the outputs to the disturbances, engineering units", "output \\ disturbance", g.Kd, g.Outputs, g.Disturbances, true)
		kd.Notes = []string{"Each element is the steady-state change of the row's output per unit change of the column's disturbance, all inputs held."}
		d.GainTables = append(d.GainTables, kd)
	}
	switch in.Scaling {
	case interact.ScaleNone:
		d.ScalingNote = "Scaling: none. The analysis used the gains in engineering units as above. The relative gain array and the minimised condition number do not depend on the scaling; singular values, the plain condition number and disturbance gains do."
		return
	case interact.ScaleSpan:
		d.ScalingNote = "Scaling: span. Each gain is multiplied by its input's span and divided by its output's span (K_ij × span(u_j) / span(y_i)), so 1 means a full-span input move gives a full-span output move."
	case interact.ScaleNominal:
		d.ScalingNote = "Scaling: nominal. Each gain is multiplied by its input's nominal value and divided by its output's nominal value (K_ij × u_j / y_i): relative changes per relative change."
	}
	ks, kds, err := g.Scaled(in.Scaling)
	if err != nil {
		d.GainMsg = &message{Text: "Scaled gains unavailable: " + err.Error(), Class: "bad"}
		return
	}
	name := in.Scaling.String()
	d.GainTables = append(d.GainTables, matrixTable("gain-k-scaled", "K scaled by "+name+" (dimensionless)", "output \\ input", ks, g.Outputs, g.Inputs, false))
	if kds != nil {
		d.GainTables = append(d.GainTables, matrixTable("gain-kd-scaled", "Kd scaled by "+name+" (dimensionless)", "output \\ disturbance", kds, g.Outputs, g.Disturbances, false))
	}
}

// RGA bands: the distance |λ-1| sets the shade, and a marker that survives
// greyscale printing says the same; negative λ is hatched.
type band struct {
	Class, Mark, Text string
	upTo              float64 // upper bound of |λ-1|
}

var bands = []band{
	{"l0", "", "|λ−1| ≤ 0.25: the loop barely notices the others", 0.25},
	{"l1", "◔", "0.25 < |λ−1| ≤ 0.5", 0.5},
	{"l2", "◑", "0.5 < |λ−1| ≤ 1", 1},
	{"l3", "◕", "1 < |λ−1| ≤ 3: strong interaction", 3},
	{"l4", "●", "|λ−1| > 3: very strong interaction, sensitive to gain errors", math.Inf(1)},
}

var negBand = band{"lneg", "✕", "λ < 0: the loop's gain changes sign when the others close; never pair", 0}

func bandOf(l float64) band {
	if math.IsNaN(l) {
		return band{Class: "lnan"}
	}
	if l < 0 {
		return negBand
	}
	for _, b := range bands {
		if math.Abs(l-1) <= b.upTo {
			return b
		}
	}
	return bands[len(bands)-1]
}

func lambdaCell(l float64, paired bool) cell {
	b := bandOf(l)
	c := cell{Text: lambdaText(l), Num: true, Class: "rga " + b.Class, Mark: b.Mark, Strong: paired}
	if paired {
		c.Class += " paired"
		c.Pre = "▸"
		c.Title = "paired in the top-ranked pairing"
	}
	return c
}

// topPairing is the best-ranked pairing that is not rejected (nil when
// every screened pairing is rejected).
func topPairing(a *interact.Analysis) *interact.PairingResult {
	for i := range a.Pairings {
		if a.Pairings[i].Verdict != interact.Rejected {
			return &a.Pairings[i]
		}
	}
	return nil
}

var verdictClass = map[interact.Verdict]string{
	interact.Recommended: "v-rec",
	interact.Acceptable:  "v-acc",
	interact.Cautioned:   "v-cau",
	interact.Rejected:    "v-rej",
}

func lambdaText(l float64) string {
	if math.IsNaN(l) {
		return "–"
	}
	return render.Num(l, 3)
}

func lambdaList(ls []float64) string {
	s := make([]string, len(ls))
	for i, l := range ls {
		s[i] = lambdaText(l)
	}
	return strings.Join(s, ", ")
}

func names(s []interact.Signal) []string {
	out := make([]string, len(s))
	for i, x := range s {
		out[i] = x.Name
	}
	return out
}

func buildAnalysis(d *document, in *Input) {
	a := in.Analysis
	n := len(a.Outputs)
	top := topPairing(a)
	if top != nil {
		d.Headline = &pairLine{Label: top.Label, Verdict: top.Verdict.String(), VerdictClass: verdictClass[top.Verdict],
			Lambdas: lambdaList(top.Lambdas), NI: num(top.Niederlinski)}
	}

	// Conditioning.
	d.Conditioning = []fact{{Label: "det K (" + a.Scaling.String() + " scaling)", Value: num(a.Det)}}
	if a.SVD != nil {
		sv := make([]string, len(a.SVD.Values))
		for i, v := range a.SVD.Values {
			sv[i] = num(v)
		}
		d.Conditioning = append(d.Conditioning,
			fact{Label: "Singular values σ (" + a.Scaling.String() + " scaling)", Value: strings.Join(sv, ", ")},
			fact{Label: "Condition number σ₁/σₙ (" + a.Scaling.String() + " scaling)", Value: num(a.SVD.Cond)})
	}
	cls := ""
	if a.MinCond > 50 {
		cls = "warn"
	}
	d.Conditioning = append(d.Conditioning, fact{Label: "Minimised condition number γ* (independent of scaling)", Value: num(a.MinCond), Class: cls})

	// Non-square selection.
	if sel := a.Selection; sel != nil {
		what, kept := "inputs", "input"
		if sel.Outputs {
			what, kept = "outputs", "output"
		}
		t := &table{ID: "selection", Caption: "Choice of " + what + " for a square system (non-square relative gain array)", Cols: []col{{Name: kept}, {Name: "RGA sum", Num: true}, {Name: "used"}}}
		var sigs []interact.Signal
		if in.Gains != nil {
			sigs = in.Gains.Inputs
			if sel.Outputs {
				sigs = in.Gains.Outputs
			}
		}
		add := func(idx int, used bool) {
			name := fmt.Sprint(idx + 1)
			if idx < len(sigs) {
				name = sigs[idx].Name
			}
			u := cell{Text: "yes", Class: "ok"}
			if !used {
				u = cell{Text: "no", Class: "muted"}
			}
			t.Rows = append(t.Rows, row{Cells: []cell{textCell(name), numCell(sel.Sums[idx]), u}})
		}
		for _, i := range sel.Kept {
			add(i, true)
		}
		for _, i := range sel.Dropped {
			add(i, false)
		}
		d.Selection = t
		d.SelectionReasons = sel.Reasons
	}

	// RGA with the top pairing marked.
	paired := make(map[[2]int]bool)
	if top != nil {
		for i, j := range top.Pairs {
			paired[[2]int{i, j}] = true
		}
		d.RGAPairNote = "Bold, outlined cells with ▸ are the pairs of the top-ranked pairing (" + top.Label + ")."
	}
	rga := &table{ID: "rga", Caption: "Relative gain array Λ = K ∘ (K⁻¹)ᵀ", Corner: "output \\ input", Matrix: true, Class: "rga-table"}
	for _, c := range a.Inputs {
		rga.Cols = append(rga.Cols, col{Name: c.Name, Num: true})
	}
	for i, r := range a.Outputs {
		h := cell{Text: r.Name}
		rw := row{Head: &h}
		for j := 0; j < n; j++ {
			rw.Cells = append(rw.Cells, lambdaCell(a.RGA.At(i, j), paired[[2]int{i, j}]))
		}
		rga.Rows = append(rga.Rows, rw)
	}
	rga.Notes = []string{"λ_ij is the gain from input j to output i with the other loops open, divided by that gain with the other outputs held by their loops. Rows and columns each sum to 1."}
	d.RGA = rga
	for _, b := range bands {
		d.RGALegend = append(d.RGALegend, legendItem{Class: b.Class, Mark: b.Mark, Text: b.Text})
	}
	d.RGALegend = append(d.RGALegend, legendItem{Class: negBand.Class, Mark: negBand.Mark, Text: negBand.Text})

	// Ranked pairings.
	rk := &table{ID: "pairings", Caption: "Ranked pairings", Cols: []col{{Name: "rank", Num: true}, {Name: "pairing (output-input)"}, {Name: "verdict"}, {Name: "paired λ", Num: true}, {Name: "NI", Num: true}, {Name: "RGA number", Num: true}, {Name: "score", Num: true}}}
	for i, p := range a.Pairings {
		id := fmt.Sprintf("pairing-%d", i+1)
		rk.Rows = append(rk.Rows, row{Cells: []cell{
			{Text: fmt.Sprint(i + 1), Num: true},
			{Text: p.Label, Strong: top != nil && &a.Pairings[i] == top},
			{Text: p.Verdict.String(), Class: "verdict " + verdictClass[p.Verdict]},
			{Text: lambdaList(p.Lambdas), Num: true},
			numCell(p.Niederlinski),
			numCell(p.RGANumber),
			numCell(p.Score),
		}})
		d.Details = append(d.Details, pairDetail{Rank: i + 1, ID: id, Label: p.Label, Verdict: p.Verdict.String(), VerdictCls: verdictClass[p.Verdict], Reasons: p.Reasons, FailedIntegrityCount: len(p.Integrity)})
	}
	d.Ranking = rk
	d.RankingNote = fmt.Sprintf("Search: %s; %d screened, %d rejected. Score = RGA number ‖Λ − P‖ + 2 × (number of cautions); lower is better. Rejected pairings are listed last.", a.Method, a.Screened, a.Rejected)
	d.AnalysisNotes = a.Notes

	// Integrity of the top pairings that are not rejected.
	shown := 0
	for i := range a.Pairings {
		p := &a.Pairings[i]
		if p.Verdict == interact.Rejected || shown == 3 {
			continue
		}
		shown++
		if t := integrityTable(a, p, i+1); t != nil {
			d.Integrity = append(d.Integrity, t)
		}
	}
	switch {
	case n < 3:
		d.IntegrityNote = "With two loops, switching one loop to manual leaves a single loop, whose steady-state gain is its open-loop gain: no subset of two or more loops remains to check. The sign of each paired relative gain (above) covers it."
	case n > 8:
		d.IntegrityNote = fmt.Sprintf("%d loops give %d subsets: only the failing subsets found by the screen are listed, in each pairing's reasons.", n, (1<<n)-n-2)
		d.Integrity = nil
	default:
		d.IntegrityNote = "Each row switches the listed loops to manual (opened) and checks the loops left in automatic: Niederlinski index of their paired sub-matrix and the paired relative gains of that sub-matrix. A subset fails when NI ≤ 0 or a paired λ < 0."
	}

	// Element sensitivity.
	if a.Sensitivity != nil {
		st := &table{ID: "sensitivity", Caption: "Element sensitivity 1/λ_ij", Corner: "output \\ input", Matrix: true}
		for _, c := range a.Inputs {
			st.Cols = append(st.Cols, col{Name: c.Name, Num: true})
		}
		for i, r := range a.Outputs {
			h := cell{Text: r.Name}
			rw := row{Head: &h}
			for j := 0; j < n; j++ {
				v := a.Sensitivity.At(i, j)
				c := numCell(v)
				if math.Abs(v) < 0.2 {
					c.Class, c.Mark = "warn", "!"
				}
				c.Strong = paired[[2]int{i, j}]
				rw.Cells = append(rw.Cells, c)
			}
			st.Rows = append(st.Rows, rw)
		}
		st.Notes = []string{"The relative change of the single gain k_ij that would make K singular (k_ij → k_ij (1 − 1/λ_ij)). Marked ! where under 0.2 in magnitude: a 20 % error in that one gain already makes the plant uncontrollable. Bold: paired elements."}
		d.Sensitivity = st
	}

	// Relative disturbance gains.
	if len(a.Disturbances) == 0 {
		d.RDGNote = "The model declares no disturbances."
	} else {
		shown := 0
		for i := range a.Pairings {
			p := &a.Pairings[i]
			if p.Verdict == interact.Rejected || p.RDG == nil || shown == 3 {
				continue
			}
			shown++
			t := &table{ID: fmt.Sprintf("rdg-%d", i+1), Caption: fmt.Sprintf("Relative disturbance gains β, pairing %d: %s", i+1, p.Label), Corner: "output \\ disturbance", Matrix: true}
			for _, c := range a.Disturbances {
				t.Cols = append(t.Cols, col{Name: c.Name, Num: true})
			}
			for oi, r := range a.Outputs {
				h := cell{Text: r.Name}
				rw := row{Head: &h}
				for dj := range a.Disturbances {
					v := p.RDG.At(oi, dj)
					c := numCell(v)
					if math.Abs(v) > 4 {
						c.Class, c.Mark = "warn", "!"
					}
					if math.IsNaN(v) {
						c.Title = "the disturbance does not move this output open loop"
					}
					rw.Cells = append(rw.Cells, c)
				}
				t.Rows = append(t.Rows, rw)
			}
			d.RDG = append(d.RDG, t)
		}
		d.RDGNote = "β = (closed-loop effect of the disturbance on the output, other loops closed) / (open-loop effect). |β| > 1: closing the other loops amplifies the disturbance in this loop; marked ! above 4 (the screen's default). – : the disturbance does not move the output open loop."
	}
}

func integrityTable(a *interact.Analysis, p *interact.PairingResult, rank int) *table {
	n := len(a.Outputs)
	if n < 3 || n > 8 {
		return nil
	}
	out := names(a.Outputs)
	t := &table{ID: fmt.Sprintf("integrity-%d", rank), Caption: fmt.Sprintf("Integrity, pairing %d: %s", rank, p.Label),
		Cols: []col{{Name: "loops in manual"}, {Name: "loops in automatic"}, {Name: "NI", Num: true}, {Name: "paired λ", Num: true}, {Name: "result"}}}
	for _, s := range interact.Integrity(a.K, p.Pairs) {
		man := s.Manual(n)
		auto := make([]string, len(s.Auto))
		for i, o := range s.Auto {
			auto[i] = out[o] + "–" + a.Inputs[p.Pairs[o]].Name
		}
		manual := make([]string, len(man))
		for i, o := range man {
			manual[i] = out[o] + "–" + a.Inputs[p.Pairs[o]].Name
		}
		res := cell{Text: "holds", Class: "ok"}
		cls := ""
		if s.Fails {
			res = cell{Text: "FAILS", Class: "bad", Strong: true, Mark: "✕"}
			cls = "fail"
		}
		t.Rows = append(t.Rows, row{Class: cls, Cells: []cell{textCell(strings.Join(manual, ", ")), textCell(strings.Join(auto, ", ")), numCell(s.NI), {Text: lambdaList(s.Lambdas), Num: true}, res}})
	}
	return t
}

func buildEnvelope(sw *Sweep) *envelope {
	if sw == nil {
		return nil
	}
	e := &envelope{Note: sw.Note}
	s := sw.Summary
	for _, p := range sw.Plots {
		if svg, ok := inlineSVG(p.SVG); ok {
			e.Plots = append(e.Plots, plotView{Title: p.Title, SVG: svg})
		}
	}
	if s == nil {
		return e
	}
	e.Facts = []fact{
		{Label: "Design", Value: s.Design.String()},
		{Label: "Points", Value: fmt.Sprintf("%d of %d", s.Points, s.Total)},
		{Label: "Converged", Value: fmt.Sprint(s.Converged)},
		{Label: "Did not converge", Value: fmt.Sprint(len(s.Failed))},
		{Label: "Pairing switches between neighbours", Value: fmt.Sprint(len(s.Switches))},
		{Label: "Singular gain matrix (det K sign change or singular point)", Value: fmt.Sprint(len(s.Singular))},
		{Label: "Outside the model's checks (left out of the figures)", Value: fmt.Sprint(len(s.Outside))},
	}
	if len(s.Failed) > 0 {
		e.Facts[3].Class = "bad"
	}
	if len(s.Singular) > 0 {
		e.Facts[5].Class = "bad"
	}
	if len(s.Outside) > 0 {
		e.Facts[6].Class = "bad"
	}
	ax := &table{ID: "envelope-axes", Caption: "Swept axes", Cols: []col{{Name: "axis"}, {Name: "unit"}, {Name: "from", Num: true}, {Name: "to", Num: true}, {Name: "points", Num: true}, {Name: "spacing"}}}
	for _, a := range s.Axes {
		sp := "linear"
		if a.Log {
			sp = "logarithmic"
		}
		ax.Rows = append(ax.Rows, row{Cells: []cell{textCell(a.Name), textCell(orDash(a.Unit)), numCell(a.From), numCell(a.To), {Text: fmt.Sprint(a.Points), Num: true}, textCell(sp)}})
	}
	e.Axes = ax

	pt := &table{ID: "envelope-pairings", Caption: "Pairings across the envelope", Cols: []col{{Name: "label"}, {Name: "pairing"}, {Name: "role"}, {Name: "passes at", Num: true}, {Name: "best at", Num: true}, {Name: "paired λ range"}, {Name: "NI range"}, {Name: "λ sign changes", Num: true}, {Name: "verdict"}}}
	for _, p := range s.Pairings {
		ls := make([]string, len(p.Lambda))
		for i, r := range p.Lambda {
			ls[i] = r.Name + ": " + rangeOf(r)
		}
		pt.Rows = append(pt.Rows, row{Cells: []cell{textCell(p.Label), textCell(p.Pairing), textCell(p.Role), {Text: pct(p.PassShare), Num: true}, {Text: pct(p.BestShare), Num: true}, textCell(strings.Join(ls, "; ")), textCell(rangeOf(p.NI)), {Text: fmt.Sprint(len(p.SignChanges)), Num: true}, textCell(p.Verdict)}})
	}
	pt.Notes = []string{"Shares are of the converged points. A sign change of a paired λ between neighbouring points means the pairing is unsafe somewhere in the envelope."}
	e.Pairings = pt

	if len(s.BestShare) > 0 {
		bt := &table{ID: "envelope-best", Caption: "Best pairing by share of converged points", Cols: []col{{Name: "best pairing"}, {Name: "share", Num: true}}}
		keys := make([]string, 0, len(s.BestShare))
		for k := range s.BestShare {
			keys = append(keys, k)
		}
		sort.Slice(keys, func(i, j int) bool {
			if s.BestShare[keys[i]] != s.BestShare[keys[j]] {
				return s.BestShare[keys[i]] > s.BestShare[keys[j]]
			}
			return keys[i] < keys[j]
		})
		for _, k := range keys {
			name := k
			if name == "" {
				name = "(no pairing passes)"
			}
			bt.Rows = append(bt.Rows, row{Cells: []cell{textCell(name), {Text: pct(s.BestShare[k]), Num: true}}})
		}
		e.BestShare = bt
	}
	e.Switches = betweenTable("envelope-switches", "Where the best pairing switches", s.Axes, s.Switches)
	e.Singular = betweenTable("envelope-singular", "Where the gain matrix turns singular", s.Axes, s.Singular)
	e.Failed = pointsTable("envelope-failed", "Points that did not converge", s.Axes, s.Failed)
	e.Outside = pointsTable("envelope-outside", "Points outside the model's checks, where the model does not hold", s.Axes, s.Outside)
	return e
}

// pointsTable lists points with their reasons, or is nil for none.
func pointsTable(id, caption string, axes []sweep.AxisInfo, ws []sweep.Where) *table {
	if len(ws) == 0 {
		return nil
	}
	t := &table{ID: id, Caption: caption, Cols: []col{{Name: "point", Num: true}, {Name: "at"}, {Name: "reason"}}}
	for i, w := range ws {
		if i == maxListed {
			t.Notes = append(t.Notes, fmt.Sprintf("… and %d more; the sweep file lists them all.", len(ws)-maxListed))
			break
		}
		t.Rows = append(t.Rows, row{Cells: []cell{{Text: fmt.Sprint(w.Index), Num: true}, textCell(whereText(axes, w)), {Text: w.Reason, Class: "note"}}})
	}
	return t
}

// maxListed bounds the rows of the envelope's event tables.
const maxListed = 25

func betweenTable(id, caption string, axes []sweep.AxisInfo, bs []sweep.Between) *table {
	if len(bs) == 0 {
		return nil
	}
	t := &table{ID: id, Caption: caption, Cols: []col{{Name: "what"}, {Name: "from point"}, {Name: "to point"}}}
	for i, b := range bs {
		if i == maxListed {
			t.Notes = append(t.Notes, fmt.Sprintf("… and %d more.", len(bs)-maxListed))
			break
		}
		to := "–"
		if b.B != nil {
			to = whereText(axes, *b.B)
		}
		t.Rows = append(t.Rows, row{Cells: []cell{textCell(b.What), textCell(whereText(axes, b.A)), textCell(to)}})
	}
	return t
}

// whereText prints a sweep point by its axis values, in axis order.
func whereText(axes []sweep.AxisInfo, w sweep.Where) string {
	parts := make([]string, 0, len(w.At))
	seen := make(map[string]bool)
	for _, a := range axes {
		if v, ok := w.At[a.Name]; ok {
			seen[a.Name] = true
			parts = append(parts, a.Name+" = "+num(v)+unitSuffix(a.Unit))
		}
	}
	var rest []string
	for k := range w.At {
		if !seen[k] {
			rest = append(rest, k)
		}
	}
	sort.Strings(rest)
	for _, k := range rest {
		parts = append(parts, k+" = "+num(w.At[k]))
	}
	return fmt.Sprintf("#%d (%s)", w.Index, strings.Join(parts, ", "))
}

func unitSuffix(u string) string {
	if u == "" {
		return ""
	}
	return " " + u
}

func rangeOf(r sweep.Range) string {
	lo, hi := float64(r.Min), float64(r.Max)
	if math.IsNaN(lo) && math.IsNaN(hi) {
		return "–"
	}
	return lambdaText(lo) + " … " + lambdaText(hi)
}

func pct(f float64) string {
	if math.IsNaN(f) {
		return "–"
	}
	return render.Num(100*f, 3) + " %"
}

func orDash(s string) string {
	if s == "" {
		return "–"
	}
	return s
}

func buildGlance(d *document, in *Input) {
	switch {
	case in.SolveErr != nil || in.Point == nil:
		d.Glance = append(d.Glance, fact{Label: "Operating point", Value: "not found", Class: "bad"})
	default:
		d.Glance = append(d.Glance, fact{Label: "Operating point", Value: "converged", Class: "ok"})
	}
	a := in.Analysis
	if a == nil {
		d.Glance = append(d.Glance, fact{Label: "Interaction analysis", Value: "not available", Class: "bad"})
		if in.AnalysisErr != nil {
			d.NoAnalysisMessages = append(d.NoAnalysisMessages, message{Text: in.AnalysisErr.Error(), Class: "bad"})
		}
	} else {
		d.Glance = append(d.Glance, fact{Label: "System analysed", Value: fmt.Sprintf("%d × %d (%s scaling)", len(a.Outputs), len(a.Inputs), a.Scaling)})
		if h := d.Headline; h != nil {
			d.Glance = append(d.Glance, fact{Label: "Top-ranked pairing", Value: h.Label + " (" + h.Verdict + ")", Class: h.VerdictClass})
		} else {
			d.Glance = append(d.Glance, fact{Label: "Top-ranked pairing", Value: "none: every screened pairing is rejected", Class: "bad"})
		}
		d.Glance = append(d.Glance, fact{Label: "Pairings screened / rejected", Value: fmt.Sprintf("%d / %d", a.Screened, a.Rejected)})
		cls := ""
		if a.MinCond > 50 {
			cls = "warn"
		}
		d.Glance = append(d.Glance, fact{Label: "Minimised condition number γ*", Value: num(a.MinCond), Class: cls})
	}
	if e := d.Envelope; e != nil {
		if in.Sweep.Summary != nil {
			s := in.Sweep.Summary
			cls := "ok"
			if len(s.Failed) > 0 || len(s.Singular) > 0 || len(s.Outside) > 0 {
				cls = "warn"
			}
			d.Glance = append(d.Glance, fact{Label: "Envelope", Value: fmt.Sprintf("%d of %d points converged, %d switch%s of best pairing", s.Converged, s.Points, len(s.Switches), pluralES(len(s.Switches))), Class: cls})
		} else {
			d.Glance = append(d.Glance, fact{Label: "Envelope", Value: "not swept", Class: "muted"})
		}
	}
	if len(d.Warnings) > 0 {
		d.Glance = append(d.Glance, fact{Label: "Model warnings", Value: fmt.Sprint(len(d.Warnings)), Class: "warn"})
	}
}

func pluralES(n int) string {
	if n == 1 {
		return ""
	}
	return "es"
}

// thresholdFacts lists the screening limits the analysis applies by
// default (interact.Thresholds; our defaults, common practice).
func thresholdFacts() []fact {
	return []fact{
		{Label: "Rejected", Value: "a paired λ < 0; a paired gain of zero; NI < 0 with three or more loops"},
		{Label: "Caution", Value: "a paired λ below 0.5 or above 4; an integrity failure; a relative disturbance gain |β| above 4; 0 < NI < 0.1 with three or more loops; γ* above 50 (for every pairing)"},
		{Label: "Recommended", Value: "no caution and every paired λ within [0.67, 1.5]"},
		{Label: "Acceptable", Value: "no caution, some paired λ outside [0.67, 1.5]"},
	}
}
