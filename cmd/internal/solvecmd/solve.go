// Package solvecmd implements 'loopwright solve': find a model's operating
// point and print it in each symbol's declared unit.
package solvecmd

import (
	"fmt"
	"io"

	"github.com/spf13/cobra"

	"github.com/loopwright/loopwright/cmd/internal/cli"
	"github.com/loopwright/loopwright/cmd/internal/modelarg"
	"github.com/loopwright/loopwright/cmd/internal/pipeline"
	"github.com/loopwright/loopwright/cmd/internal/render"
	"github.com/loopwright/loopwright/model"
	"github.com/loopwright/loopwright/solve"
)

// SolveOptions are the inputs of the solve command.
type SolveOptions struct {
	F        *cli.Factory
	Model    string
	Format   string
	Jacobian string // ad or fd
	Trace    bool
	Flags    modelarg.Flags
}

// NewCmdSolve returns the solve command. runF replaces the run function in tests.
func NewCmdSolve(f *cli.Factory, runF func(*SolveOptions) error) *cobra.Command {
	opts := &SolveOptions{F: f}
	cmd := &cobra.Command{
		Use:   "solve MODEL",
		Short: "Find the operating point of a model",
		Long: `Solve finds the steady operating point of MODEL by Newton's method with the
exact Jacobian (automatic differentiation), a line search, bounds that are
never crossed, block-by-block solving where the equations decompose, and a
homotopy fallback. It prints unknowns, outputs and defines in their declared
units. A model that does not converge exits with status 1 and names the
equations with the largest residuals.`,
		Example: `  loopwright solve lib:column
  loopwright solve lib:column --set "L=2.8 kmol/min" --format json
  loopwright solve plant.yaml --jacobian fd --trace`,
		Args: cobra.ExactArgs(1),
		RunE: func(cmd *cobra.Command, args []string) error {
			opts.Model = args[0]
			if runF != nil {
				return runF(opts)
			}
			return solveRun(opts)
		},
	}
	cmd.Flags().StringVar(&opts.Format, "format", "table", "output format: table, json or csv")
	pipeline.RegisterJacobian(cmd, &opts.Jacobian)
	cmd.Flags().BoolVar(&opts.Trace, "trace", false, "print every Newton iteration on stderr")
	opts.Flags.Register(cmd)
	return cmd
}

// Value is a number with its unit in the JSON output.
type Value struct {
	Value render.Float `json:"value"`
	Unit  string       `json:"unit"`
}

// Result is the JSON form of a solve (a stable interface for scripts).
type Result struct {
	Model        string                `json:"model"`
	Converged    bool                  `json:"converged"`
	Status       string                `json:"status"`
	Method       string                `json:"method"`
	Iterations   int                   `json:"iterations"`
	ResidualNorm render.Float          `json:"residual_norm"`
	ScaledNorm   render.Float          `json:"scaled_residual_norm"`
	Variables    render.Ordered[Value] `json:"variables"`
	Outputs      render.Ordered[Value] `json:"outputs"`
	Defines      render.Ordered[Value] `json:"defines"`
	Inputs       render.Ordered[Value] `json:"inputs"`
	Warnings     []string              `json:"warnings"`
	Error        string                `json:"error,omitempty"`
}

func solveRun(opts *SolveOptions) error {
	format, err := render.ParseFormat(opts.Format, render.Table, render.JSON, render.CSV)
	if err != nil {
		return &cli.FlagError{Err: err}
	}
	popts, err := pipeline.OptionsFor(opts.Jacobian)
	if err != nil {
		return err
	}
	sys, err := opts.Flags.Load(opts.F, opts.Model)
	if err != nil {
		return err
	}
	popts.Solve = &solve.Options{}
	if opts.Trace {
		popts.Solve.Recorder = solve.Printer(opts.F.IO.ErrOut)
	}
	pt, solveErr := pipeline.Operate(opts.F.Context, sys, popts)
	if pt == nil || pt.Result == nil {
		return solveErr
	}
	res := build(pt, solveErr)
	out := opts.F.IO.Out
	switch format {
	case render.JSON:
		err = render.WriteJSON(out, res)
	case render.CSV:
		err = table(pt, res).WriteCSV(out)
	default:
		err = writeTable(out, pt, res)
	}
	if err != nil {
		return err
	}
	return solveErr
}

func build(pt *pipeline.Point, solveErr error) *Result {
	sys, r := pt.Sys, pt.Result
	res := &Result{
		Model:        sys.Name,
		Converged:    r.Status == solve.Converged,
		Status:       r.Status.String(),
		Method:       r.Method,
		Iterations:   r.Iterations,
		ResidualNorm: render.Float(r.ResidualNorm),
		ScaledNorm:   render.Float(r.ScaledResidualNorm),
		Warnings:     []string{},
	}
	for i, s := range sys.Unknowns {
		res.Variables.Set(s.Name, Value{render.Float(s.Unit.FromSI(pt.X[i])), s.Unit.Text})
	}
	for _, i := range sys.Inputs {
		s := sys.Params[i]
		res.Inputs.Set(s.Name, Value{render.Float(s.Unit.FromSI(pt.P[i])), s.Unit.Text})
	}
	if pt.Outputs != nil {
		for i, o := range sys.Outputs {
			res.Outputs.Set(o.Name, Value{render.Float(o.Unit.FromSI(pt.Outputs[i])), o.Unit.Text})
		}
		for i, d := range sys.Defines {
			res.Defines.Set(d.Name, Value{render.Float(d.Unit.FromSI(pt.Defines[i])), d.Unit.Text})
		}
	}
	for _, w := range append(append([]model.Warning(nil), sys.Warnings...), pt.CheckWarnings...) {
		res.Warnings = append(res.Warnings, w.String())
	}
	if solveErr != nil {
		res.Error = solveErr.Error()
	}
	return res
}

// table lists every quantity as kind, name, value, unit: the CSV form and
// the body of the terminal form.
func table(pt *pipeline.Point, res *Result) *render.TableData {
	sys := pt.Sys
	t := &render.TableData{
		Headers: []string{"kind", "name", "value", "unit"},
		Align:   []render.Align{render.Left, render.Left, render.Right, render.Left},
	}
	add := func(kind, name string, v Value) {
		t.Rows = append(t.Rows, []string{kind, name, render.Num(float64(v.Value), 6), v.Unit})
	}
	for _, o := range sys.Outputs {
		if v, ok := res.Outputs.Get(o.Name); ok {
			add("output", o.Name, v)
		}
	}
	for _, i := range sys.Inputs {
		v, _ := res.Inputs.Get(sys.Params[i].Name)
		add("input", sys.Params[i].Name, v)
	}
	for _, s := range sys.Unknowns {
		v, _ := res.Variables.Get(s.Name)
		add("unknown", s.Name, v)
	}
	for _, d := range sys.Defines {
		if v, ok := res.Defines.Get(d.Name); ok {
			add("define", d.Name, v)
		}
	}
	return t
}

func writeTable(w io.Writer, pt *pipeline.Point, res *Result) error {
	status := "converged"
	if !res.Converged {
		status = "NOT CONVERGED (" + res.Status + ")"
	}
	fmt.Fprintf(w, "model %s: %s by %s in %d iterations, max residual %s (scaled %s)\n\n",
		res.Model, status, res.Method, res.Iterations, render.Num(float64(res.ResidualNorm), 3), render.Num(float64(res.ScaledNorm), 3))
	t := table(pt, res)
	for _, wn := range res.Warnings {
		t.Notes = append(t.Notes, wn)
	}
	if !res.Converged {
		t.Title = "last point reached (not a solution):"
	}
	return t.Write(w)
}
