// Package gainscmd implements 'loopwright gains': the steady-state gain
// matrix K = dy/du and the disturbance-gain matrix Kd = dy/dd at a model's
// operating point (or from a measured gain file), in engineering units and
// scaled.
package gainscmd

import (
	"fmt"
	"io"
	"strconv"

	"github.com/spf13/cobra"
	"gonum.org/v1/gonum/mat"

	"github.com/loopwright/loopwright/cmd/internal/cli"
	"github.com/loopwright/loopwright/cmd/internal/pipeline"
	"github.com/loopwright/loopwright/cmd/internal/render"
	"github.com/loopwright/loopwright/interact"
)

// GainsOptions are the inputs of the gains command.
type GainsOptions struct {
	F       *cli.Factory
	Format  string
	Scaling string
	Source  pipeline.GainFlags
}

// NewCmdGains returns the gains command. runF replaces the run function in tests.
func NewCmdGains(f *cli.Factory, runF func(*GainsOptions) error) *cobra.Command {
	opts := &GainsOptions{F: f}
	cmd := &cobra.Command{
		Use:   "gains [MODEL]",
		Short: "Steady-state gain matrices at the operating point",
		Long: `Gains solves MODEL for its operating point and derives the steady-state gain
matrix K = dy/du (outputs by inputs) and the disturbance-gain matrix
Kd = dy/dd from the exact Jacobian by the implicit-function theorem: one
factorisation, no re-solving. With --gains FILE it reads a measured gain
matrix instead (CSV or YAML, see 'loopwright pair --help').

Gains are printed in engineering units (output unit per input unit; affine
units such as degC count as differences) and scaled:
  span     K_ij * span(u_j) / span(y_i): each input's largest expected move
           against each output's largest acceptable deviation (default when
           every signal has a span)
  nominal  K_ij * u_j / y_i: relative gains about the operating point
  none     engineering units only`,
		Example: `  loopwright gains lib:column
  loopwright gains lib:blender --scaling nominal --format json
  loopwright gains --gains steptests.csv`,
		Args: cobra.MaximumNArgs(1),
		RunE: func(cmd *cobra.Command, args []string) error {
			if len(args) == 1 {
				opts.Source.Model = args[0]
			}
			if runF != nil {
				return runF(opts)
			}
			return gainsRun(opts)
		},
	}
	cmd.Flags().StringVar(&opts.Format, "format", "table", "output format: table, json or csv")
	cmd.Flags().StringVar(&opts.Scaling, "scaling", "auto", "scaling shown besides engineering units: span, nominal, none, or auto (span when every signal has one)")
	opts.Source.Register(cmd)
	return cmd
}

// SignalJSON describes one row or column.
type SignalJSON struct {
	Name    string       `json:"name"`
	Unit    string       `json:"unit"`
	Span    render.Float `json:"span"`
	Nominal render.Float `json:"nominal"`
}

// GainsJSON is the JSON form of the gains command (a stable interface).
type GainsJSON struct {
	Source          string           `json:"source"`
	Outputs         []SignalJSON     `json:"outputs"`
	Inputs          []SignalJSON     `json:"inputs"`
	Disturbances    []SignalJSON     `json:"disturbances"`
	Gain            [][]render.Float `json:"gain"`
	DisturbanceGain [][]render.Float `json:"disturbance_gain,omitempty"`
	Scaling         string           `json:"scaling"`
	GainScaled      [][]render.Float `json:"gain_scaled,omitempty"`
	DistScaled      [][]render.Float `json:"disturbance_gain_scaled,omitempty"`
}

// ChooseScaling resolves "auto" to span when every signal has a span, else none.
func ChooseScaling(s string, g *interact.GainSet) (interact.Scaling, error) {
	if s == "auto" {
		if _, _, err := g.Scaled(interact.ScaleSpan); err == nil {
			return interact.ScaleSpan, nil
		}
		return interact.ScaleNone, nil
	}
	sc, err := interact.ParseScaling(s)
	if err != nil {
		return 0, cli.FlagErrorf("--scaling: %v", err)
	}
	return sc, nil
}

func gainsRun(opts *GainsOptions) error {
	format, err := render.ParseFormat(opts.Format, render.Table, render.JSON, render.CSV)
	if err != nil {
		return &cli.FlagError{Err: err}
	}
	src, err := opts.Source.Load(opts.F)
	if err != nil {
		return err
	}
	g := src.Gains
	sc, err := ChooseScaling(opts.Scaling, g)
	if err != nil {
		return err
	}
	var ks, kds *mat.Dense
	if sc != interact.ScaleNone {
		if ks, kds, err = g.Scaled(sc); err != nil {
			return &cli.InputError{Err: fmt.Errorf("--scaling %s: %w", sc, err)}
		}
	}
	out := opts.F.IO.Out
	switch format {
	case render.JSON:
		return render.WriteJSON(out, toJSON(g, sc, ks, kds))
	case render.CSV:
		return writeCSV(out, g, sc, ks, kds)
	}
	return writeTable(out, g, sc, ks, kds)
}

// Signals converts signals for JSON.
func Signals(s []interact.Signal) []SignalJSON {
	out := make([]SignalJSON, len(s))
	for i, x := range s {
		out[i] = SignalJSON{x.Name, x.Unit, render.Float(x.Span), render.Float(x.Nominal)}
	}
	return out
}

func toJSON(g *interact.GainSet, sc interact.Scaling, ks, kds *mat.Dense) *GainsJSON {
	j := &GainsJSON{
		Source:       g.Source,
		Outputs:      Signals(g.Outputs),
		Inputs:       Signals(g.Inputs),
		Disturbances: Signals(g.Disturbances),
		Gain:         render.Rows(g.K),
		Scaling:      sc.String(),
	}
	if g.Kd != nil {
		j.DisturbanceGain = render.Rows(g.Kd)
	}
	if ks != nil {
		j.GainScaled = render.Rows(ks)
	}
	if kds != nil {
		j.DistScaled = render.Rows(kds)
	}
	return j
}

// Labels returns "name [unit]" labels of the signals.
func Labels(s []interact.Signal) []string {
	out := make([]string, len(s))
	for i, x := range s {
		out[i] = render.Header(x.Name, x.Unit)
	}
	return out
}

// Names returns the signals' names.
func Names(s []interact.Signal) []string {
	out := make([]string, len(s))
	for i, x := range s {
		out[i] = x.Name
	}
	return out
}

func writeTable(w io.Writer, g *interact.GainSet, sc interact.Scaling, ks, kds *mat.Dense) error {
	fmt.Fprintf(w, "gains from %s\n\n", g.Source)
	tables := []*render.TableData{
		render.Matrix("K = dy/du in engineering units (output unit per input unit)", "output \\ input", Labels(g.Outputs), Labels(g.Inputs), g.K, 5),
	}
	if g.Kd != nil {
		tables = append(tables, render.Matrix("Kd = dy/dd in engineering units", "output \\ disturbance", Labels(g.Outputs), Labels(g.Disturbances), g.Kd, 5))
	}
	if ks != nil {
		tables = append(tables, render.Matrix(fmt.Sprintf("K scaled by %s (dimensionless)", scalingWords(sc)), "output \\ input", Names(g.Outputs), Names(g.Inputs), ks, 5))
	}
	if kds != nil {
		tables = append(tables, render.Matrix(fmt.Sprintf("Kd scaled by %s (dimensionless)", scalingWords(sc)), "output \\ disturbance", Names(g.Outputs), Names(g.Disturbances), kds, 5))
	}
	for i, t := range tables {
		if i > 0 {
			fmt.Fprintln(w)
		}
		if err := t.Write(w); err != nil {
			return err
		}
	}
	return nil
}

func scalingWords(sc interact.Scaling) string {
	switch sc {
	case interact.ScaleSpan:
		return "spans: K_ij * span(u_j) / span(y_i)"
	case interact.ScaleNominal:
		return "nominal values: K_ij * u_j / y_i"
	}
	return sc.String()
}

func writeCSV(w io.Writer, g *interact.GainSet, sc interact.Scaling, ks, kds *mat.Dense) error {
	t := &render.TableData{Headers: []string{"matrix", "scaling", "output", "output_unit", "column", "column_unit", "value"}}
	add := func(name, scaling string, m *mat.Dense, cols []interact.Signal) {
		if m == nil {
			return
		}
		for i, o := range g.Outputs {
			for j, c := range cols {
				t.Rows = append(t.Rows, []string{name, scaling, o.Name, o.Unit, c.Name, c.Unit, strconv.FormatFloat(m.At(i, j), 'g', -1, 64)})
			}
		}
	}
	add("K", "engineering", g.K, g.Inputs)
	add("Kd", "engineering", g.Kd, g.Disturbances)
	if sc != interact.ScaleNone {
		add("K", sc.String(), ks, g.Inputs)
		add("Kd", sc.String(), kds, g.Disturbances)
	}
	return t.WriteCSV(w)
}
