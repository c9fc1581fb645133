// Package checkcmd implements 'loopwright check': load and expand a model,
// check its units, count its degrees of freedom and analyse its structure,
// without solving anything.
package checkcmd

import (
	"fmt"
	"io"
	"strings"

	"github.com/spf13/cobra"

	"github.com/loopwright/loopwright/cmd/internal/cli"
	"github.com/loopwright/loopwright/cmd/internal/modelarg"
	"github.com/loopwright/loopwright/cmd/internal/render"
	"github.com/loopwright/loopwright/model"
	"github.com/loopwright/loopwright/solve/structure"
)

// CheckOptions are the inputs of the check command.
type CheckOptions struct {
	F      *cli.Factory
	Model  string
	Format string
	Flags  modelarg.Flags
}

// NewCmdCheck returns the check command. runF replaces the run function in tests.
func NewCmdCheck(f *cli.Factory, runF func(*CheckOptions) error) *cobra.Command {
	opts := &CheckOptions{F: f}
	cmd := &cobra.Command{
		Use:   "check MODEL",
		Short: "Load a model, check units and count degrees of freedom",
		Long: `Check loads MODEL, expands its sets, for-families and defines, checks every
equation for dimensional consistency, and analyses the structure of the
equations: degrees of freedom, structural rank, and (when the system is
structurally singular) which equations are over-determined and which unknowns
are under-determined. Nothing is solved.`,
		Example: `  loopwright check lib:column
  loopwright check plant.yaml --const NT=61 --format json`,
		Args: cobra.ExactArgs(1),
		RunE: func(cmd *cobra.Command, args []string) error {
			opts.Model = args[0]
			if runF != nil {
				return runF(opts)
			}
			return checkRun(opts)
		},
	}
	cmd.Flags().StringVar(&opts.Format, "format", "table", "output format: table or json")
	opts.Flags.Register(cmd)
	return cmd
}

// Report is the JSON form of the check result (a stable interface).
type Report struct {
	Model             string        `json:"model"`
	File              string        `json:"file"`
	Unknowns          int           `json:"unknowns"`
	Equations         int           `json:"equations"`
	Parameters        int           `json:"parameters"`
	Inputs            []string      `json:"inputs"`
	Outputs           []string      `json:"outputs"`
	Disturbances      []string      `json:"disturbances"`
	DegreesOfFreedom  int           `json:"degrees_of_freedom"`
	StructuralRank    int           `json:"structural_rank"`
	Blocks            int           `json:"blocks"`
	LargestBlock      int           `json:"largest_block"`
	Units             string        `json:"units"`
	StructurallyValid bool          `json:"structurally_nonsingular"`
	OverDetermined    []string      `json:"over_determined_equations,omitempty"`
	UnderDetermined   []string      `json:"under_determined_unknowns,omitempty"`
	Suggestions       []string      `json:"suggestions,omitempty"`
	Warnings          []WarningJSON `json:"warnings"`
}

// WarningJSON is one warning with its position.
type WarningJSON struct {
	Pos     string `json:"pos"`
	Message string `json:"message"`
}

func checkRun(opts *CheckOptions) error {
	format, err := render.ParseFormat(opts.Format, render.Table, render.JSON)
	if err != nil {
		return &cli.FlagError{Err: err}
	}
	sys, err := opts.Flags.Load(opts.F, opts.Model)
	if err != nil {
		return err
	}
	rep := Build(sys)
	out := opts.F.IO.Out
	if format == render.JSON {
		if err := render.WriteJSON(out, rep); err != nil {
			return err
		}
	} else if err := writeTable(out, rep); err != nil {
		return err
	}
	if !rep.StructurallyValid {
		return cli.Findingf("%s is structurally singular: %s", rep.File, firstOr(rep.Suggestions, "see above"))
	}
	if rep.DegreesOfFreedom != 0 {
		return cli.Findingf("%s has %d degrees of freedom left: %s", rep.File, rep.DegreesOfFreedom, firstOr(rep.Suggestions, "see above"))
	}
	return nil
}

func firstOr(s []string, def string) string {
	if len(s) > 0 {
		return s[0]
	}
	return def
}

// Build analyses an expanded system into a Report.
func Build(sys *model.System) *Report {
	st := structure.Analyze(sys.Incidence(), len(sys.Unknowns))
	rep := &Report{
		Model:          sys.Name,
		File:           sys.File,
		Unknowns:       len(sys.Unknowns),
		Equations:      len(sys.Equations),
		Parameters:     len(sys.Params),
		Inputs:         paramNames(sys, sys.Inputs),
		Disturbances:   paramNames(sys, sys.Disturbances),
		StructuralRank: st.Rank,
		Units:          "consistent",
		Warnings:       []WarningJSON{},
	}
	for _, o := range sys.Outputs {
		rep.Outputs = append(rep.Outputs, o.Name)
	}
	rep.DegreesOfFreedom = rep.Unknowns - rep.Equations
	for _, b := range st.Blocks {
		rep.Blocks++
		if len(b.Unknowns) > rep.LargestBlock {
			rep.LargestBlock = len(b.Unknowns)
		}
	}
	rep.StructurallyValid = !st.Singular()
	for _, e := range st.OverEquations {
		rep.OverDetermined = append(rep.OverDetermined, sys.Equations[e].Name)
	}
	for _, u := range st.UnderUnknowns {
		rep.UnderDetermined = append(rep.UnderDetermined, sys.Unknowns[u].Name)
	}
	rep.Suggestions = suggestions(rep, st)
	for _, w := range sys.Warnings {
		rep.Warnings = append(rep.Warnings, WarningJSON{Pos: w.Pos.String(), Message: w.Msg})
	}
	for _, w := range unmovableOutputs(sys, st) {
		rep.Warnings = append(rep.Warnings, w)
	}
	return rep
}

func paramNames(sys *model.System, idx []int) []string {
	out := []string{}
	for _, i := range idx {
		out = append(out, sys.Params[i].Name)
	}
	return out
}

func suggestions(rep *Report, st *structure.Structure) []string {
	var s []string
	nOver := len(st.OverEquations) - len(st.OverUnknowns)
	nUnder := len(st.UnderUnknowns) - len(st.UnderEquations)
	if nOver > 0 {
		s = append(s, fmt.Sprintf("equations %s over-determine their unknowns: remove %d of them, or turn %d parameter(s) they use into variables",
			list(rep.OverDetermined, 6), nOver, nOver))
	}
	if nUnder > 0 {
		s = append(s, fmt.Sprintf("unknowns %s are not fixed by the equations: add %d equation(s) for them, or make %d of them parameters or inputs",
			list(rep.UnderDetermined, 6), nUnder, nUnder))
	}
	if len(s) == 0 && rep.DegreesOfFreedom != 0 {
		s = append(s, fmt.Sprintf("%d unknowns against %d equations", rep.Unknowns, rep.Equations))
	}
	return s
}

func list(names []string, max int) string {
	if len(names) <= max {
		return strings.Join(names, ", ")
	}
	return strings.Join(names[:max], ", ") + fmt.Sprintf(" and %d more", len(names)-max)
}

func writeTable(w io.Writer, rep *Report) error {
	dash := func(s []string) string {
		if len(s) == 0 {
			return "-"
		}
		return strings.Join(s, ", ")
	}
	status := "structurally non-singular"
	if !rep.StructurallyValid {
		status = "STRUCTURALLY SINGULAR"
	}
	t := &render.TableData{
		Title:   fmt.Sprintf("model %s (%s)", rep.Model, rep.File),
		Headers: []string{"item", "value"},
		Rows: [][]string{
			{"unknowns", fmt.Sprint(rep.Unknowns)},
			{"equations", fmt.Sprint(rep.Equations)},
			{"parameters", fmt.Sprint(rep.Parameters)},
			{"inputs", dash(rep.Inputs)},
			{"outputs", dash(rep.Outputs)},
			{"disturbances", dash(rep.Disturbances)},
			{"degrees of freedom", fmt.Sprint(rep.DegreesOfFreedom)},
			{"structural rank", fmt.Sprintf("%d of %d (%s)", rep.StructuralRank, rep.Equations, status)},
			{"solve blocks", fmt.Sprintf("%d (largest %d unknowns)", rep.Blocks, rep.LargestBlock)},
			{"units", rep.Units},
		},
	}
	if len(rep.OverDetermined) > 0 {
		t.Rows = append(t.Rows, []string{"over-determined", list(rep.OverDetermined, 12)})
	}
	if len(rep.UnderDetermined) > 0 {
		t.Rows = append(t.Rows, []string{"under-determined", list(rep.UnderDetermined, 12)})
	}
	for _, s := range rep.Suggestions {
		t.Notes = append(t.Notes, "suggestion: "+s)
	}
	for _, wn := range rep.Warnings {
		t.Notes = append(t.Notes, wn.Pos+": warning: "+wn.Message)
	}
	return t.Write(w)
}

// unmovableOutputs warns about outputs that no input can move, structurally.
func unmovableOutputs(sys *model.System, st *structure.Structure) []WarningJSON {
	if len(sys.Inputs) == 0 {
		return nil
	}
	isInput := make(map[int]bool, len(sys.Inputs))
	for _, i := range sys.Inputs {
		isInput[i] = true
	}
	eqParams := sys.ParamIncidence()
	var out []WarningJSON
	for _, o := range sys.Outputs {
		var unknowns []int
		direct := false
		model.Walk(o.Expr, func(n model.Node) {
			switch n := n.(type) {
			case *model.Var:
				unknowns = append(unknowns, n.Index)
			case *model.Param:
				direct = direct || isInput[n.Index]
			}
		})
		if direct || st.Moves(eqParams, sys.Inputs, unknowns) {
			continue
		}
		out = append(out, WarningJSON{Pos: o.Pos.String(),
			Message: fmt.Sprintf("output %q cannot be moved by any input: it will have a zero row in the gain matrix; pair it with nothing or add an input that reaches it", o.Name)})
	}
	return out
}
