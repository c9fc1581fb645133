// Package report writes loopwright's one-file HTML report: a document a
// reviewer can open in any browser, print and file, holding the model
// summary, the operating point, the gain matrices, the relative gain array,
// the ranked pairings with their reasons, integrity, element sensitivity,
// relative disturbance gains and the envelope sweep.
//
// The file is self-contained: the stylesheet and the plots (SVG) are inline,
// there are no scripts and nothing is fetched. Every model-provided string
// goes through html/template, so it is escaped for its context. The same
// Input gives the same bytes: the report carries no date or host name.
package report

import (
	"bytes"
	_ "embed"
	"fmt"
	"html/template"
	"io"
	"strings"

	"github.com/loopwright/loopwright/cmd/internal/plots"
	"github.com/loopwright/loopwright/interact"
	"github.com/loopwright/loopwright/interact/sweep"
	"github.com/loopwright/loopwright/model"
	"github.com/loopwright/loopwright/solve"
)

// Input is what a report shows. Only System is required: every other part
// may be nil when its step failed or was not run, and the report then says
// so in place of the missing section (with the error when there was one).
type Input struct {
	System *model.System // the expanded model, with any --set values applied

	// Generator names the program in the footer, "loopwright v0.3.0". The
	// report carries no date, so equal inputs give equal bytes.
	Generator string

	Solve    *solve.Result // how the operating point was found; nil if not attempted
	SolveErr error         // why the solve failed, or nil
	Point    *Point        // the operating point; nil when the solve failed

	Scaling     interact.Scaling   // the scaling the analysis used
	Gains       *interact.GainSet  // K and Kd in display units; nil when not computed
	Analysis    *interact.Analysis // nil when the analysis failed
	AnalysisErr error              // why there are no gains or no analysis, or nil

	Sweep *Sweep // the envelope sweep; nil when none was asked for
}

// Point is the operating point. Every value is in coherent SI, in the order
// of the matching System slice; the report converts to display units.
type Point struct {
	X       []float64 // unknowns, System.Unknowns order
	Outputs []float64 // System.Outputs order
	Defines []float64 // System.Defines order; nil to leave them out
	Checks  []float64 // System.Checks order; nil when not evaluated
}

// Sweep is the envelope sweep as the report shows it.
type Sweep struct {
	Summary *sweep.Summary // nil when the sweep did not produce records
	Plots   []Plot
	// Note says why there is no sweep or what limited it ("the model has
	// no envelope", "12 of 77 points did not converge"); empty otherwise.
	Note string
}

// Plot is one SVG figure to inline.
type Plot struct {
	Title string // caption under the figure
	SVG   []byte // a complete SVG document, as the plots package writes it
}

//go:embed report.html.tmpl
var pageText string

//go:embed style.css
var styleText string

var page = template.Must(template.New("report").Funcs(template.FuncMap{
	"css": func() template.CSS { return template.CSS(styleText) },
}).Parse(pageText))

// Write renders the report of in to w.
func Write(w io.Writer, in *Input) error {
	if in == nil || in.System == nil {
		panic("report: Write needs an Input with a System")
	}
	doc, err := build(in)
	if err != nil {
		return err
	}
	var buf bytes.Buffer
	if err := page.Execute(&buf, doc); err != nil {
		return fmt.Errorf("report: %w", err)
	}
	_, err = w.Write(buf.Bytes())
	return err
}

// PlotsOf draws every plot of a sweep (plots.Data.Files) for the report,
// each with a caption saying what it shows.
func PlotsOf(d *plots.Data) ([]Plot, error) {
	var out []Plot
	for _, f := range d.Files() {
		var b bytes.Buffer
		if err := f.Draw(&b); err != nil {
			return nil, fmt.Errorf("report: plot %s: %w", f.Name, err)
		}
		out = append(out, Plot{Title: plotTitle(f.Name), SVG: b.Bytes()})
	}
	return out, nil
}

// plotTitle turns a plot's file name into a caption.
func plotTitle(name string) string {
	base := strings.TrimSuffix(name, ".svg")
	switch {
	case strings.HasPrefix(base, "lambda-"):
		return "Paired relative gains of the pairings of interest along " + strings.TrimPrefix(base, "lambda-") + " (other axes held nearest their nominal values; gaps where points did not converge)."
	case strings.HasPrefix(base, "heatmap-"):
		return "Relative gain of the recommended pairing over the first two axes (" + strings.TrimPrefix(base, "heatmap-") + "); the thick black line is where the best pairing switches."
	}
	return base
}
