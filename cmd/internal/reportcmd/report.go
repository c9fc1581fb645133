// Package reportcmd implements 'loopwright report': solve a model, analyse
// its gains, sweep its operating envelope when it has one, and write the
// whole result as one self-contained HTML file for people who review
// pairing decisions without a command line.
package reportcmd

import (
	"bytes"
	"context"
	"errors"
	"fmt"
	"io"
	"os"
	"path/filepath"

	"github.com/spf13/cobra"

	"github.com/loopwright/loopwright/cmd/internal/cli"
	"github.com/loopwright/loopwright/cmd/internal/gainscmd"
	"github.com/loopwright/loopwright/cmd/internal/modelarg"
	"github.com/loopwright/loopwright/cmd/internal/pipeline"
	"github.com/loopwright/loopwright/cmd/internal/plots"
	"github.com/loopwright/loopwright/cmd/internal/report"
	"github.com/loopwright/loopwright/interact"
	"github.com/loopwright/loopwright/interact/sweep"
	"github.com/loopwright/loopwright/model"
)

// ReportOptions are the inputs of the report command.
type ReportOptions struct {
	F      *cli.Factory
	Model  string
	Output string // -o: the HTML file, "-" for standard output

	// Sweep is true to sweep the envelope, false to skip it; SweepSet says
	// whether --sweep or --no-sweep was given (otherwise the sweep runs when
	// the model has an envelope).
	Sweep    bool
	SweepSet bool
	Jobs     int    // sweep workers; 0 means one per core
	Scaling  string // auto, span, nominal or none
	Top      int    // ranked pairings to show; 0 for all
	Flags    modelarg.Flags
}

// NewCmdReport returns the report command. runF replaces the run function in tests.
func NewCmdReport(f *cli.Factory, runF func(*ReportOptions) error) *cobra.Command {
	opts := &ReportOptions{F: f}
	var sweepOn, sweepOff bool
	cmd := &cobra.Command{
		Use:   "report MODEL -o FILE.html",
		Short: "Write the whole analysis as one HTML file to read, print and file",
		Long: `Report finds the operating point of MODEL, derives its steady-state gains,
ranks the control-loop pairings and, when the model declares an envelope,
sweeps it; then it writes everything into one HTML file: the model and its
assumptions, the operating point, K and Kd in engineering units and scaled,
the relative gain array (shaded, with markers that survive greyscale
printing), the ranked pairings with verdicts and reasons, integrity, element
sensitivity, relative disturbance gains, the envelope summary with plots, and
the caution that goes with every steady-state screen.

The file needs nothing else: the stylesheet and plots are inside it, it has
no scripts and fetches nothing, and it prints with a page per section.

When the operating point is not found, or the analysis finds a problem, the
report is still written and says so; the exit status is then 1.`,
		Example: `  loopwright report lib:blender -o blender.html
  loopwright report plant.yaml -o plant.html --scaling nominal --no-sweep
  loopwright report lib:column -o - > column.html`,
		Args: cobra.ExactArgs(1),
		RunE: func(cmd *cobra.Command, args []string) error {
			opts.Model = args[0]
			if sweepOn && sweepOff {
				return cli.FlagErrorf("--sweep and --no-sweep contradict each other: give one")
			}
			opts.SweepSet = sweepOn || sweepOff
			opts.Sweep = sweepOn
			if opts.Output == "" {
				return cli.FlagErrorf("give the file to write with -o FILE.html (or -o - for standard output)")
			}
			if opts.Jobs < 0 {
				return cli.FlagErrorf("-j %d: give a positive number of workers, or 0 for one per core", opts.Jobs)
			}
			if opts.Top < 0 {
				return cli.FlagErrorf("--top %d: give a positive number, or 0 for all", opts.Top)
			}
			if runF != nil {
				return runF(opts)
			}
			return reportRun(opts)
		},
	}
	fl := cmd.Flags()
	fl.StringVarP(&opts.Output, "output", "o", "", "the HTML file to write (- for standard output)")
	fl.BoolVar(&sweepOn, "sweep", false, "sweep the operating envelope (the default when the model has one)")
	fl.BoolVar(&sweepOff, "no-sweep", false, "leave the envelope sweep out")
	fl.IntVarP(&opts.Jobs, "jobs", "j", 0, "sweep workers (0: one per core); the report does not depend on it")
	fl.StringVar(&opts.Scaling, "scaling", "auto", "gain scaling: span, nominal, none, or auto (span when every signal has one)")
	fl.IntVar(&opts.Top, "top", 10, "how many ranked pairings to show (0 for all)")
	opts.Flags.Register(cmd)
	return cmd
}

func reportRun(opts *ReportOptions) error {
	f := opts.F
	ctx := f.Context
	sys, err := opts.Flags.Load(f, opts.Model)
	if err != nil {
		return err
	}
	in, finding, err := Assemble(ctx, sys, opts)
	if err != nil {
		return err
	}
	in.Generator = "loopwright " + f.Version
	var buf bytes.Buffer
	if err := report.Write(&buf, in); err != nil {
		return err
	}
	if opts.Output == "-" {
		if _, err := f.IO.Out.Write(buf.Bytes()); err != nil {
			return err
		}
	} else {
		if err := writeAtomic(opts.Output, buf.Bytes()); err != nil {
			return fmt.Errorf("writing the report: %w", err)
		}
		fmt.Fprintf(f.IO.ErrOut, "wrote %s (%d KiB)\n", opts.Output, (buf.Len()+1023)/1024)
	}
	return finding
}

// Assemble runs the analysis for the report of sys: the operating point,
// gains, ranked pairings and (as opts asks) the envelope sweep. A problem
// the report can show (no convergence, a singular gain matrix, every
// pairing rejected, sweep points that failed) is put into the Input and
// also returned as finding, a *cli.FindingError for the exit status. err
// is for what stops the report: bad input, an interrupt.
func Assemble(ctx context.Context, sys *model.System, opts *ReportOptions) (in *report.Input, finding, err error) {
	in = &report.Input{System: sys}
	want := len(sys.Envelope) > 0
	if opts.SweepSet {
		want = opts.Sweep
		if want && len(sys.Envelope) == 0 {
			return nil, nil, cli.FlagErrorf("--sweep: %s declares no envelope to sweep (add an envelope: section, or use 'loopwright sweep --axis')", sys.File)
		}
	}
	var findings []string
	note := func(format string, args ...any) { findings = append(findings, fmt.Sprintf(format, args...)) }
	done := func() (*report.Input, error, error) {
		if len(findings) == 0 {
			return in, nil, nil
		}
		return in, cli.Findingf("%s", joinFindings(findings)), nil
	}

	pt, err := pipeline.Operate(ctx, sys, nil)
	if pt != nil {
		in.Solve = pt.Result
	}
	if err != nil {
		var fe *cli.FindingError
		if ctx.Err() != nil || !errors.As(err, &fe) {
			return nil, nil, err
		}
		in.SolveErr = err
		in.AnalysisErr = errors.New("no operating point, so no gains")
		note("the operating point was not found")
		return done()
	}
	checks := make([]float64, len(sys.Checks))
	if len(checks) > 0 {
		if err := pt.Prog.NewEval().Checks(checks, pt.X, pt.P); err != nil {
			checks = nil
		}
	}
	in.Point = &report.Point{X: pt.X, Outputs: pt.Outputs, Defines: pt.Defines, Checks: checks}
	if len(pt.CheckWarnings) > 0 {
		note("%d range check(s) fail at the operating point", len(pt.CheckWarnings))
	}
	if len(sys.Outputs) == 0 || len(sys.Inputs) == 0 {
		in.AnalysisErr = fmt.Errorf("the model declares %d outputs and %d inputs: the gain analysis needs both", len(sys.Outputs), len(sys.Inputs))
		return done()
	}
	g, err := pt.Gains()
	if err != nil {
		in.AnalysisErr = err
		note("the gains could not be computed")
		return done()
	}
	in.Gains = g
	sc, err := gainscmd.ChooseScaling(opts.Scaling, g)
	if err != nil {
		return nil, nil, err
	}
	in.Scaling = sc
	top := opts.Top
	if top == 0 {
		top = -1
	}
	a, err := pipeline.Analyze(g, &interact.Options{Scaling: sc, MaxPairings: top})
	if err != nil {
		var ie *cli.InputError
		if errors.As(err, &ie) {
			return nil, nil, err
		}
		in.AnalysisErr = err
		note("the interaction analysis failed")
	} else {
		in.Analysis = a
		if len(a.Pairings) > 0 && a.Pairings[0].Verdict == interact.Rejected {
			note("every pairing screened is rejected")
		}
	}

	if want {
		sw, failed, err := runSweep(ctx, sys, pt, sc, opts.Jobs)
		if err != nil {
			return nil, nil, err
		}
		in.Sweep = sw
		if failed > 0 {
			note("%d envelope point(s) did not converge", failed)
		}
	}
	return done()
}

func joinFindings(s []string) string {
	out := s[0]
	for _, x := range s[1:] {
		out += "; " + x
	}
	return out + " (the report says more)"
}

// runSweep sweeps the model's envelope as 'loopwright sweep' does with its
// defaults, in memory. A sweep that cannot start is a note in the report,
// not a failure of the report; an interrupt is an error.
func runSweep(ctx context.Context, sys *model.System, pt *pipeline.Point, sc interact.Scaling, jobs int) (*report.Sweep, int, error) {
	prob, err := sweep.FromModel(ctx, sys, pt.Prog, &sweep.ModelOptions{Analysis: &interact.Options{Scaling: sc}})
	if err != nil {
		if ctx.Err() != nil {
			return nil, 0, fmt.Errorf("%w: %v", cli.ErrInterrupted, err)
		}
		return &report.Sweep{Note: "The envelope was not swept: " + err.Error()}, 0, nil
	}
	var recs []sweep.Record
	err = sweep.Run(ctx, prob, &sweep.Options{Workers: jobs}, func(r *sweep.Record) error {
		recs = append(recs, *r)
		return nil
	})
	if err != nil {
		if ctx.Err() != nil {
			return nil, 0, fmt.Errorf("%w: the envelope sweep was stopped; no report was written", cli.ErrInterrupted)
		}
		return nil, 0, err
	}
	s, err := sweep.Summarize(prob.Header, recs)
	if err != nil {
		return nil, 0, err
	}
	sw := &report.Sweep{Summary: s}
	d, err := plots.NewData(prob.Header, recs)
	if err == nil {
		sw.Plots, err = report.PlotsOf(d)
	}
	if err != nil {
		sw.Note = "The sweep's plots could not be drawn: " + err.Error()
	}
	if len(s.Failed) > 0 {
		sw.Note = fmt.Sprintf("%d of %d points did not converge; the summary covers the converged points.", len(s.Failed), s.Points)
	}
	return sw, len(s.Failed), nil
}

// writeAtomic writes data to path so that a reader sees the old file or
// the new one, never a part: a temporary file beside it, then a rename.
func writeAtomic(path string, data []byte) error {
	tmp, err := os.CreateTemp(filepath.Dir(path), "."+filepath.Base(path)+".tmp*")
	if err != nil {
		return err
	}
	defer os.Remove(tmp.Name()) // after the rename this does nothing
	if _, err := io.Copy(tmp, bytes.NewReader(data)); err != nil {
		tmp.Close()
		return err
	}
	if err := tmp.Chmod(0o644); err != nil {
		tmp.Close()
		return err
	}
	if err := tmp.Close(); err != nil {
		return err
	}
	return os.Rename(tmp.Name(), path)
}
