// Package paircmd implements 'loopwright pair': the interaction analysis of
// a gain matrix (from a model at its operating point, or measured) and the
// ranked control-loop pairings with their reasons.
package paircmd

import (
	"fmt"
	"io"
	"strings"

	"github.com/spf13/cobra"

	"github.com/loopwright/loopwright/cmd/internal/cli"
	"github.com/loopwright/loopwright/cmd/internal/gainscmd"
	"github.com/loopwright/loopwright/cmd/internal/pipeline"
	"github.com/loopwright/loopwright/cmd/internal/render"
	"github.com/loopwright/loopwright/interact"
)

// PairOptions are the inputs of the pair command.
type PairOptions struct {
	F       *cli.Factory
	Format  string
	Scaling string
	Top     int
	Source  pipeline.GainFlags
}

// NewCmdPair returns the pair command. runF replaces the run function in tests.
func NewCmdPair(f *cli.Factory, runF func(*PairOptions) error) *cobra.Command {
	opts := &PairOptions{F: f}
	cmd := &cobra.Command{
		Use:   "pair [MODEL]",
		Short: "Rank the control-loop pairings with reasons",
		Long: `Pair finds the operating point of MODEL, derives the steady-state gains and
screens every pairing of outputs with inputs (all n! for n <= 8; the best
ones by Murty's ranking of assignments beyond that) on the relative gain
array, the Niederlinski index, loop-failure integrity, relative disturbance
gains and the condition number. Pairings come best first, each with a verdict
(recommended, acceptable, caution, rejected) and reasons in plain words.

With --gains FILE it analyses a measured gain matrix instead:
  CSV   first row: a free cell, then the input names; then one row per output:
        its name, then its gains. Lines starting with # are comments.
  YAML  inputs/outputs/disturbances with units and spans, and gain rows
        (see the README).

The result is a steady-state screen: confirm it by dynamic analysis and review
it under local codes and licensed engineering practice.`,
		Example: `  loopwright pair lib:column
  loopwright pair lib:blender --format json
  loopwright pair --gains steptests.csv`,
		Args: cobra.MaximumNArgs(1),
		RunE: func(cmd *cobra.Command, args []string) error {
			if len(args) == 1 {
				opts.Source.Model = args[0]
			}
			if runF != nil {
				return runF(opts)
			}
			return pairRun(opts)
		},
	}
	cmd.Flags().StringVar(&opts.Format, "format", "table", "output format: table, json or csv")
	cmd.Flags().StringVar(&opts.Scaling, "scaling", "auto", "gain scaling for singular values and condition numbers: span, nominal, none, or auto (span when every signal has one)")
	cmd.Flags().IntVar(&opts.Top, "top", 5, "how many ranked pairings to show (0 for all)")
	opts.Source.Register(cmd)
	return cmd
}

func pairRun(opts *PairOptions) error {
	format, err := render.ParseFormat(opts.Format, render.Table, render.JSON, render.CSV)
	if err != nil {
		return &cli.FlagError{Err: err}
	}
	if opts.Top < 0 {
		return cli.FlagErrorf("--top %d: give a positive number, or 0 for all", opts.Top)
	}
	src, err := opts.Source.Load(opts.F)
	if err != nil {
		return err
	}
	sc, err := gainscmd.ChooseScaling(opts.Scaling, src.Gains)
	if err != nil {
		return err
	}
	max := opts.Top
	if max == 0 {
		max = -1
	}
	a, err := pipeline.Analyze(src.Gains, &interact.Options{Scaling: sc, MaxPairings: max})
	if err != nil {
		return err
	}
	res := Build(src.Gains, a)
	out := opts.F.IO.Out
	switch format {
	case render.JSON:
		err = render.WriteJSON(out, res)
	case render.CSV:
		err = writeCSV(out, res)
	default:
		err = WriteTable(out, src.Gains, a, opts.F.IO.Color())
	}
	if err != nil {
		return err
	}
	if len(a.Pairings) > 0 && a.Pairings[0].Verdict == interact.Rejected {
		return cli.Findingf("every pairing screened is rejected: see the reasons above")
	}
	return nil
}

// PairingJSON is one ranked pairing in the JSON output.
type PairingJSON struct {
	Rank         int              `json:"rank"`
	Pairs        [][2]string      `json:"pairs"`
	Label        string           `json:"label"`
	Lambdas      []render.Float   `json:"lambdas"`
	Niederlinski render.Float     `json:"niederlinski"`
	RGANumber    render.Float     `json:"rga_number"`
	Score        render.Float     `json:"score"`
	Verdict      string           `json:"verdict"`
	Reasons      []string         `json:"reasons"`
	Integrity    []IntegrityJSON  `json:"integrity_failures"`
	RDG          [][]render.Float `json:"relative_disturbance_gains,omitempty"`
	Decoupler    [][]render.Float `json:"static_decoupler,omitempty"`
}

// IntegrityJSON is a failing loop subset.
type IntegrityJSON struct {
	Manual       []string       `json:"manual"`
	Auto         []string       `json:"auto"`
	Niederlinski render.Float   `json:"niederlinski"`
	Lambdas      []render.Float `json:"lambdas"`
}

// SelectionJSON says how a non-square gain set was cut to a square one.
type SelectionJSON struct {
	Chose   string           `json:"chose"` // "outputs" or "inputs"
	Kept    []string         `json:"kept"`
	Dropped []string         `json:"dropped"`
	Sums    []render.Float   `json:"sums"`
	RGA     [][]render.Float `json:"rga_nonsquare"`
	Reasons []string         `json:"reasons"`
}

// Result is the JSON form of the pair command (a stable interface): the
// analysed square system and its pairings, best first.
type Result struct {
	Source             string                `json:"source"`
	Outputs            []string              `json:"outputs"`
	Inputs             []string              `json:"inputs"`
	Disturbances       []string              `json:"disturbances"`
	Scaling            string                `json:"scaling"`
	Gain               [][]render.Float      `json:"gain"`
	DisturbanceGain    [][]render.Float      `json:"disturbance_gain,omitempty"`
	RGA                [][]render.Float      `json:"rga"`
	Sensitivity        [][]render.Float      `json:"element_sensitivity"`
	SingularValues     []render.Float        `json:"singular_values"`
	ConditionNumber    render.Float          `json:"condition_number"`
	MinConditionNumber render.Float          `json:"min_condition_number"`
	Determinant        render.Float          `json:"determinant"`
	Method             string                `json:"method"`
	Screened           int                   `json:"screened"`
	Rejected           int                   `json:"rejected"`
	Selection          *SelectionJSON        `json:"selection,omitempty"`
	Notes              []string              `json:"notes"`
	Pairings           []PairingJSON         `json:"pairings"`
	Caution            string                `json:"caution"`
	Signals            map[string][]gainsSig `json:"signals"`
}

type gainsSig = gainscmd.SignalJSON

// Build turns an analysis into the JSON result.
func Build(g *interact.GainSet, a *interact.Analysis) *Result {
	outs, ins, dists := gainscmd.Names(a.Outputs), gainscmd.Names(a.Inputs), gainscmd.Names(a.Disturbances)
	r := &Result{
		Source:             a.Source,
		Outputs:            outs,
		Inputs:             ins,
		Disturbances:       dists,
		Scaling:            a.Scaling.String(),
		Gain:               render.Rows(a.K),
		RGA:                render.Rows(a.RGA),
		Sensitivity:        render.Rows(a.Sensitivity),
		SingularValues:     render.Floats(a.SVD.Values),
		ConditionNumber:    render.Float(a.SVD.Cond),
		MinConditionNumber: render.Float(a.MinCond),
		Determinant:        render.Float(a.Det),
		Method:             a.Method,
		Screened:           a.Screened,
		Rejected:           a.Rejected,
		Notes:              append([]string{}, a.Notes...),
		Pairings:           []PairingJSON{},
		Caution:            a.Caution,
		Signals: map[string][]gainsSig{
			"outputs":      gainscmd.Signals(a.Outputs),
			"inputs":       gainscmd.Signals(a.Inputs),
			"disturbances": gainscmd.Signals(a.Disturbances),
		},
	}
	if a.Kd != nil {
		r.DisturbanceGain = render.Rows(a.Kd)
	}
	if s := a.Selection; s != nil {
		sj := &SelectionJSON{Chose: "inputs", Sums: render.Floats(s.Sums), RGA: render.Rows(s.RGA), Reasons: s.Reasons}
		pool := g.Inputs
		if s.Outputs {
			sj.Chose, pool = "outputs", g.Outputs
		}
		for _, i := range s.Kept {
			sj.Kept = append(sj.Kept, pool[i].Name)
		}
		for _, i := range s.Dropped {
			sj.Dropped = append(sj.Dropped, pool[i].Name)
		}
		r.Selection = sj
	}
	for rank, p := range a.Pairings {
		pj := PairingJSON{
			Rank:         rank + 1,
			Label:        p.Label,
			Lambdas:      render.Floats(p.Lambdas),
			Niederlinski: render.Float(p.Niederlinski),
			RGANumber:    render.Float(p.RGANumber),
			Score:        render.Float(p.Score),
			Verdict:      p.Verdict.String(),
			Reasons:      append([]string{}, p.Reasons...),
			Integrity:    []IntegrityJSON{},
			RDG:          render.Rows(p.RDG),
		}
		for i, j := range p.Pairs {
			pj.Pairs = append(pj.Pairs, [2]string{outs[i], ins[j]})
		}
		for _, c := range p.Integrity {
			ij := IntegrityJSON{Niederlinski: render.Float(c.NI), Lambdas: render.Floats(c.Lambdas)}
			for _, i := range c.Manual(len(outs)) {
				ij.Manual = append(ij.Manual, outs[i])
			}
			for _, i := range c.Auto {
				ij.Auto = append(ij.Auto, outs[i])
			}
			pj.Integrity = append(pj.Integrity, ij)
		}
		if rank == 0 && p.Verdict != interact.Rejected {
			if d, err := interact.Decoupler(a.K, p.Pairs); err == nil {
				pj.Decoupler = render.Rows(d)
			}
		}
		r.Pairings = append(r.Pairings, pj)
	}
	return r
}

// WriteTable prints the analysis for a person at a terminal.
func WriteTable(w io.Writer, g *interact.GainSet, a *interact.Analysis, colour bool) error {
	outs, ins := gainscmd.Names(a.Outputs), gainscmd.Names(a.Inputs)
	var b strings.Builder
	fmt.Fprintf(&b, "pairing analysis of %s\n", a.Source)
	fmt.Fprintf(&b, "scaling for singular values and condition number: %s\n\n", a.Scaling)
	if s := a.Selection; s != nil {
		b.WriteString("non-square gain matrix:\n")
		for _, r := range s.Reasons {
			b.WriteString(render.Wrap(r, 88, "  ") + "\n")
		}
		b.WriteString("\n")
	}
	flush := func(t *render.TableData) error {
		if _, err := io.WriteString(w, b.String()); err != nil {
			return err
		}
		b.Reset()
		if err := t.Write(w); err != nil {
			return err
		}
		_, err := io.WriteString(w, "\n")
		return err
	}
	if err := flush(render.Matrix("K, "+scaleWords(a.Scaling), "output \\ input", outs, ins, a.K, 4)); err != nil {
		return err
	}
	if err := flush(render.Matrix("relative gain array Λ = K ∘ (K⁻¹)ᵀ (independent of scaling)", "output \\ input", outs, ins, a.RGA, 4)); err != nil {
		return err
	}
	sv := make([]string, len(a.SVD.Values))
	for i, v := range a.SVD.Values {
		sv[i] = render.Num(v, 4)
	}
	fmt.Fprintf(&b, "singular values %s; condition number %s; minimised condition number %s (over diagonal scalings)\n",
		strings.Join(sv, ", "), render.Num(a.SVD.Cond, 4), render.Num(a.MinCond, 4))
	for _, n := range a.Notes {
		b.WriteString(render.Wrap("note: "+n, 88, "") + "\n")
	}
	fmt.Fprintf(&b, "\nranked pairings (%s; %d screened, %d rejected; best first)\n", a.Method, a.Screened, a.Rejected)
	t := &render.TableData{
		Headers: []string{"#", "pairing", "verdict", "paired λ", "NI", "RGA number", "score"},
		Align:   []render.Align{render.Right, render.Left, render.Left, render.Left, render.Right, render.Right, render.Right},
	}
	for i, p := range a.Pairings {
		ls := make([]string, len(p.Lambdas))
		for k, l := range p.Lambdas {
			ls[k] = render.Num(l, 3)
		}
		t.Rows = append(t.Rows, []string{fmt.Sprint(i + 1), p.Label, verdictText(p.Verdict, colour), strings.Join(ls, ", "),
			render.Num(p.Niederlinski, 3), render.Num(p.RGANumber, 3), render.Num(p.Score, 3)})
	}
	if err := flush(t); err != nil {
		return err
	}
	for i, p := range a.Pairings {
		fmt.Fprintf(&b, "%d. %s: %s\n", i+1, p.Label, p.Verdict)
		for _, r := range p.Reasons {
			b.WriteString("   - " + strings.TrimPrefix(render.Wrap(r, 88, "     "), "     ") + "\n")
		}
	}
	if len(a.Pairings) > 0 && a.Pairings[0].Verdict != interact.Rejected {
		best := a.Pairings[0]
		b.WriteString("\n")
		if best.RDG != nil {
			if err := flush(render.Matrix("relative disturbance gains β of pairing 1 (small is good)", "output \\ disturbance", outs, gainscmd.Names(a.Disturbances), best.RDG, 3)); err != nil {
				return err
			}
		}
		if err := flush(render.Matrix("element sensitivity 1/λ_ij: relative change of k_ij alone that makes K singular", "output \\ input", outs, ins, a.Sensitivity, 3)); err != nil {
			return err
		}
		if d, err := interact.Decoupler(a.K, best.Pairs); err == nil {
			if err := flush(render.Matrix("static decoupler D for pairing 1 (K·D is diagonal in the paired order; rows are inputs)", "input \\ loop", ins, pairedLoops(outs, ins, best.Pairs), d, 4)); err != nil {
				return err
			}
		}
	}
	b.WriteString(render.Wrap("CAUTION: "+a.Caution, 88, "") + "\n")
	_, err := io.WriteString(w, b.String())
	return err
}

func pairedLoops(outs, ins []string, p interact.Pairing) []string {
	l := make([]string, len(outs))
	for i := range outs {
		l[i] = outs[i] + "-" + ins[p[i]]
	}
	return l
}

func scaleWords(s interact.Scaling) string {
	switch s {
	case interact.ScaleSpan:
		return "scaled by spans (K_ij * span(u_j) / span(y_i))"
	case interact.ScaleNominal:
		return "scaled by nominal values (K_ij * u_j / y_i)"
	}
	return "in engineering units (no scaling)"
}

func verdictText(v interact.Verdict, colour bool) string {
	code := 0
	switch v {
	case interact.Recommended:
		code = 32
	case interact.Acceptable:
		code = 36
	case interact.Cautioned:
		code = 33
	case interact.Rejected:
		code = 31
	}
	return render.Colour(colour && code != 0, code, v.String())
}

func writeCSV(w io.Writer, r *Result) error {
	t := &render.TableData{Headers: []string{"rank", "pairing", "verdict", "paired_lambdas", "niederlinski", "rga_number", "score", "reasons", "caution"}}
	for _, p := range r.Pairings {
		ls := make([]string, len(p.Lambdas))
		for i, l := range p.Lambdas {
			ls[i] = fmt.Sprint(float64(l))
		}
		t.Rows = append(t.Rows, []string{fmt.Sprint(p.Rank), p.Label, p.Verdict, strings.Join(ls, ";"),
			fmt.Sprint(float64(p.Niederlinski)), fmt.Sprint(float64(p.RGANumber)), fmt.Sprint(float64(p.Score)), strings.Join(p.Reasons, " | "), r.Caution})
	}
	return t.WriteCSV(w)
}
