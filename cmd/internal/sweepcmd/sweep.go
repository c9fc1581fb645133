// Package sweepcmd implements 'loopwright sweep', which solves a model over
// its operating envelope and reports where a pairing stops being safe, and
// 'loopwright merge', which combines the files of a sharded sweep.
package sweepcmd

import (
	"context"
	"errors"
	"fmt"
	"io"
	"os"
	"path/filepath"
	"sort"
	"strings"
	"text/tabwriter"
	"time"

	"github.com/schollz/progressbar/v3"
	"github.com/spf13/cobra"

	"github.com/loopwright/loopwright/cmd/internal/cli"
	"github.com/loopwright/loopwright/cmd/internal/modelarg"
	"github.com/loopwright/loopwright/cmd/internal/plots"
	"github.com/loopwright/loopwright/cmd/internal/render"
	"github.com/loopwright/loopwright/interact/sweep"
	"github.com/loopwright/loopwright/jacobian"
)

// SweepOptions are the inputs of the sweep command.
type SweepOptions struct {
	F     *cli.Factory
	Model string
	Flags modelarg.Flags

	Axes    []string // --axis NAME=FROM:TO:POINTS[:log]
	Design  string   // grid, lhs, random
	Points  int
	Seed    uint64
	Pairs   []string // --pair "OUT:IN OUT:IN"
	Jobs    int
	Out     string
	Format  string
	Summary string
	Plots   string
	Resume  bool
	Shard   string
	Quiet   bool

	onRecord func() // tests: called after each record is written
	onPoint  func() // tests: called before a worker solves a point
}

// hookedWorker calls a test hook before each point it solves.
type hookedWorker struct {
	sweep.Worker
	hook func()
}

func (w hookedWorker) Point(ctx context.Context, p []float64, from sweep.State, rec *sweep.Record) (sweep.State, error) {
	w.hook()
	return w.Worker.Point(ctx, p, from, rec)
}

// NewCmdSweep returns the sweep command. runF replaces the run function in tests.
func NewCmdSweep(f *cli.Factory, runF func(*SweepOptions) error) *cobra.Command {
	opts := &SweepOptions{F: f}
	cmd := &cobra.Command{
		Use:   "sweep MODEL",
		Short: "Solve a model across its operating envelope and find where pairings fail",
		Long: `Sweep solves MODEL at every point of a design over one or more axes (the
model's envelope, or --axis), each point by continuation from a converged
neighbour, and at each point records the outputs, the gain matrix, its
relative gain array, the Niederlinski index of each pairing of interest, the
condition number and the best pairing. The summary says for each pairing the
share of points where it passes every screen, the range of its relative gains
and Niederlinski index, and where a relative gain changes sign, the gain matrix
turns singular or the best pairing switches.

An axis is NAME=FROM:TO:POINTS[:log]. FROM and TO are in the parameter's
declared unit, or carry their own: --axis "F=0.9 kmol/min:1.1 kmol/min:5".

Per-point records stream to --out (CSV or JSON Lines, one line per point, in
point order, flushed as they complete). Interrupted (Ctrl-C, SIGTERM), the
sweep stops with every finished point on disk; run it again with --resume to
finish. --shard K/N runs share K of N (whole continuation chains), for batch
systems; 'loopwright merge' combines the shard files.

Results do not depend on -j: chains are fixed by the design.`,
		Example: `  loopwright sweep lib:column --out column.csv --summary column.json --plots plots/
  loopwright sweep plant.yaml --axis "F=0.9 kmol/min:1.1 kmol/min:21" --axis zF=0.4:0.6:21
  loopwright sweep plant.yaml --design lhs --points 500 --seed 7 --out pts.jsonl
  loopwright sweep plant.yaml --out part3.jsonl --shard 3/8`,
		Args: cobra.ExactArgs(1),
		RunE: func(cmd *cobra.Command, args []string) error {
			opts.Model = args[0]
			if opts.Resume && opts.Out == "" {
				return cli.FlagErrorf("--resume needs --out: the file to continue")
			}
			switch opts.Design {
			case "grid", "lhs", "random":
			default:
				return cli.FlagErrorf("--design %q: use grid, lhs or random", opts.Design)
			}
			if opts.Design != "grid" && opts.Points < 1 {
				return cli.FlagErrorf("--design %s needs --points N", opts.Design)
			}
			if opts.Design == "grid" && cmd.Flags().Changed("points") {
				return cli.FlagErrorf("--points is for --design lhs or random; a grid takes POINTS from each axis")
			}
			if opts.Jobs < 0 {
				return cli.FlagErrorf("-j %d: give a positive number of workers", opts.Jobs)
			}
			if runF != nil {
				return runF(opts)
			}
			return sweepRun(opts)
		},
	}
	fl := cmd.Flags()
	fl.StringArrayVar(&opts.Axes, "axis", nil, "sweep axis NAME=FROM:TO:POINTS[:log] (repeatable; default: the model's envelope)")
	fl.StringVar(&opts.Design, "design", "grid", "layout of the points: grid, lhs (Latin hypercube) or random")
	fl.IntVar(&opts.Points, "points", 0, "number of points for --design lhs or random")
	fl.Uint64Var(&opts.Seed, "seed", 1, "seed of --design lhs or random")
	fl.StringArrayVar(&opts.Pairs, "pair", nil, "a pairing of interest, \"OUT:IN OUT:IN\" (repeatable)")
	fl.IntVarP(&opts.Jobs, "jobs", "j", 0, "parallel workers (default: all cores)")
	fl.StringVar(&opts.Out, "out", "", "per-point file, .csv or .jsonl")
	fl.StringVar(&opts.Format, "format", "", "format of --out: csv or jsonl (default: from the extension)")
	fl.StringVar(&opts.Summary, "summary", "", "write the summary as JSON to this file")
	fl.StringVar(&opts.Plots, "plots", "", "write SVG plots into this directory")
	fl.BoolVar(&opts.Resume, "resume", false, "continue the sweep in --out, computing only missing points")
	fl.StringVar(&opts.Shard, "shard", "", "run share K of N of the points (K/N, K from 0)")
	fl.BoolVarP(&opts.Quiet, "quiet", "q", false, "no progress bar")
	opts.Flags.Register(cmd)
	return cmd
}

func sweepRun(opts *SweepOptions) error {
	f := opts.F
	ctx := f.Context
	shard, err := parseShard(opts.Shard)
	if err != nil {
		return cli.FlagErrorf("%v", err)
	}
	format := sweep.Format(opts.Format)
	if opts.Out != "" && format == "" {
		if format, err = sweep.FormatFor(opts.Out); err != nil {
			return cli.FlagErrorf("%v", err)
		}
	}
	if format != "" && format != sweep.CSV && format != sweep.JSONL {
		return cli.FlagErrorf("--format %q: use csv or jsonl", opts.Format)
	}
	sys, err := opts.Flags.Load(f, opts.Model)
	if err != nil {
		return err
	}
	mo := &sweep.ModelOptions{Design: sweep.Design{Kind: sweep.DesignKind(opts.Design)}, ModelID: opts.Model}
	if opts.Design != "grid" {
		mo.Design.Points, mo.Design.Seed = opts.Points, opts.Seed
	}
	for _, spec := range opts.Axes {
		a, err := parseAxis(sys, spec)
		if err != nil {
			return &cli.InputError{Err: err}
		}
		mo.Axes = append(mo.Axes, a)
	}
	for _, spec := range opts.Pairs {
		p, err := parsePairing(sys, spec)
		if err != nil {
			return &cli.InputError{Err: err}
		}
		mo.Pairings = append(mo.Pairings, p)
	}
	prog, err := jacobian.Compile(sys)
	if err != nil {
		return &cli.InputError{Err: err}
	}
	prob, err := sweep.FromModel(ctx, sys, prog, mo)
	if err != nil {
		if ctx.Err() != nil {
			return fmt.Errorf("%w: %v", cli.ErrInterrupted, err)
		}
		return &cli.InputError{Err: err}
	}
	h := *prob.Header
	h.Shard = shard
	prob.Header = &h

	// The per-point file: new, or resumed.
	var (
		out     *os.File
		enc     *sweep.Encoder
		records []sweep.Record
		done    = map[int]bool{}
	)
	if opts.Out != "" {
		out, records, err = openOut(opts.Out, format, &h, opts.Resume)
		if err != nil {
			return err
		}
		defer func() {
			if out != nil {
				out.Close()
			}
		}()
		for _, r := range records {
			done[r.Index] = true
		}
		enc = sweep.NewEncoder(out, format, &h)
		if isEmpty(out) {
			if err := enc.WriteHeader(); err != nil {
				return err
			}
		}
	}
	if opts.onPoint != nil {
		newWorker := prob.NewWorker
		prob.NewWorker = func() sweep.Worker { return hookedWorker{newWorker(), opts.onPoint} }
	}
	total := len(prob.Plan.PointsOf(shard)) - len(done)
	bar := newProgress(f, opts.Quiet, total)
	inOrder := sortedByIndex(records)
	last := -1
	if len(records) > 0 {
		last = records[len(records)-1].Index
	}
	runErr := sweep.Run(ctx, prob, &sweep.Options{Workers: opts.Jobs, Shard: shard, Done: done, Progress: bar.update},
		func(r *sweep.Record) error {
			if enc != nil {
				if err := enc.WriteRecord(r); err != nil {
					return fmt.Errorf("%s: %w", opts.Out, err)
				}
			}
			if r.Index < last {
				inOrder = false
			}
			last = r.Index
			records = append(records, *r)
			if opts.onRecord != nil {
				opts.onRecord()
			}
			return nil
		})
	bar.finish()
	if out != nil {
		err := syncClose(out)
		out = nil
		if err != nil && runErr == nil {
			runErr = err
		}
	}
	if runErr != nil {
		if errors.Is(runErr, context.Canceled) || errors.Is(runErr, context.DeadlineExceeded) {
			msg := fmt.Sprintf("%d points are on disk", len(records))
			if opts.Out == "" {
				msg = "no --out file was given, so nothing was kept"
			}
			return fmt.Errorf("%w: sweep stopped; %s; run the same command with --resume to finish", cli.ErrInterrupted, msg)
		}
		return runErr
	}
	// A resumed file may hold points out of order (those that finished
	// beyond a gap when the run was stopped): rewrite it in point order, so
	// the file equals an uninterrupted run's.
	if opts.Out != "" && !inOrder {
		sortRecords(records)
		if err := writeAtomic(opts.Out, func(w io.Writer) error { return writeRecords(w, format, &h, records) }); err != nil {
			return err
		}
	} else {
		sortRecords(records)
	}
	return finish(f, &h, records, opts.Summary, opts.Plots)
}

func isEmpty(f *os.File) bool {
	st, err := f.Stat()
	return err == nil && st.Size() == 0
}

// openOut opens the per-point file. A new run truncates it. A resumed run
// reads it, checks that it belongs to this sweep and shard, cuts a partial
// last line, and returns the records on disk with the file open for
// appending.
func openOut(path string, format sweep.Format, h *sweep.Header, resume bool) (*os.File, []sweep.Record, error) {
	if !resume {
		f, err := os.Create(path)
		return f, nil, err
	}
	f, err := os.OpenFile(path, os.O_RDWR|os.O_CREATE, 0o644)
	if err != nil {
		return nil, nil, err
	}
	if isEmpty(f) {
		return f, nil, nil
	}
	file, err := sweep.Read(path, f)
	if err != nil {
		f.Close()
		return nil, nil, &cli.InputError{Err: fmt.Errorf("--resume: %w", err)}
	}
	switch {
	case file.Header.Fingerprint != h.Fingerprint:
		f.Close()
		return nil, nil, &cli.InputError{Err: fmt.Errorf("--resume: %s belongs to another sweep (fingerprint %s, this sweep %s): the model, its constants and values, the axes, the design or the pairings differ; use the same command line or another --out", path, file.Header.Fingerprint, h.Fingerprint)}
	case file.Header.Shard != h.Shard:
		f.Close()
		return nil, nil, &cli.InputError{Err: fmt.Errorf("--resume: %s holds shard %s, this run is shard %s", path, file.Header.Shard, h.Shard)}
	case file.Format != format:
		f.Close()
		return nil, nil, &cli.InputError{Err: fmt.Errorf("--resume: %s is %s, not %s", path, file.Format, format)}
	}
	seen := map[int]bool{}
	for _, r := range file.Records {
		if seen[r.Index] {
			f.Close()
			return nil, nil, &cli.InputError{Err: fmt.Errorf("--resume: %s holds point %d twice", path, r.Index)}
		}
		seen[r.Index] = true
	}
	if err := f.Truncate(file.Complete); err != nil {
		f.Close()
		return nil, nil, err
	}
	if _, err := f.Seek(file.Complete, io.SeekStart); err != nil {
		f.Close()
		return nil, nil, err
	}
	return f, file.Records, nil
}

func writeRecords(w io.Writer, format sweep.Format, h *sweep.Header, recs []sweep.Record) error {
	enc := sweep.NewEncoder(w, format, h)
	if err := enc.WriteHeader(); err != nil {
		return err
	}
	for i := range recs {
		if err := enc.WriteRecord(&recs[i]); err != nil {
			return err
		}
	}
	return nil
}

func sortRecords(r []sweep.Record) {
	sort.Slice(r, func(i, j int) bool { return r[i].Index < r[j].Index })
}

func sortedByIndex(r []sweep.Record) bool {
	return sort.SliceIsSorted(r, func(i, j int) bool { return r[i].Index < r[j].Index })
}

// finish writes the summary, the plots and the table, and turns failed
// points into a finding (exit 1).
func finish(f *cli.Factory, h *sweep.Header, records []sweep.Record, summaryPath, plotDir string) error {
	s, err := sweep.Summarize(h, records)
	if err != nil {
		return &cli.InputError{Err: err}
	}
	if summaryPath != "" {
		if err := writeAtomic(summaryPath, func(w io.Writer) error { return render.WriteJSON(w, s) }); err != nil {
			return err
		}
	}
	if plotDir != "" {
		if err := os.MkdirAll(plotDir, 0o755); err != nil {
			return err
		}
		d, err := plots.NewData(h, records)
		if err != nil {
			return err
		}
		for _, pf := range d.Files() {
			if err := writeAtomic(filepath.Join(plotDir, pf.Name), pf.Draw); err != nil {
				return fmt.Errorf("plot %s: %w", pf.Name, err)
			}
		}
	}
	printSummary(f.IO.Out, s)
	switch {
	case len(s.Failed) > 0:
		return cli.Findingf("%d of %d points did not converge", len(s.Failed), s.Points)
	case len(s.Outside) > 0:
		return cli.Findingf("%d of %d points lie outside the model's checks", len(s.Outside), s.Points)
	}
	return nil
}

// printSummary prints the summary as a table with the verdicts under it.
func printSummary(w io.Writer, s *sweep.Summary) {
	var axes []string
	for _, a := range s.Axes {
		u := ""
		if a.Unit != "" {
			u = " " + a.Unit
		}
		axes = append(axes, fmt.Sprintf("%s %s..%s%s (%d)", a.Name, render.Num(a.From, 4), render.Num(a.To, 4), u, a.Points))
	}
	fmt.Fprintf(w, "Sweep of %s: %s; %s\n", s.Model, strings.Join(axes, " x "), s.Design)
	fmt.Fprintf(w, "%d points, %d converged, %d failed", s.Points, s.Converged, len(s.Failed))
	if len(s.Outside) > 0 {
		fmt.Fprintf(w, ", %d outside the model's checks", len(s.Outside))
	}
	fmt.Fprint(w, "\n\n")
	tw := tabwriter.NewWriter(w, 0, 0, 2, ' ', 0)
	fmt.Fprintln(tw, "pairing\trole\tpasses\tbest at\tλ min\tλ max\tNI min\tNI max\tsign changes")
	for _, p := range s.Pairings {
		lmin, lmax := "-", "-"
		if len(p.Lambda) > 0 {
			lmin, lmax = render.Num(float64(p.Lambda[0].Min), 4), render.Num(float64(p.Lambda[0].Max), 4)
		}
		fmt.Fprintf(tw, "%s %s\t%s\t%.0f %%\t%.0f %%\t%s\t%s\t%s\t%s\t%d\n", p.Label, p.Pairing, p.Role, 100*p.PassShare, 100*p.BestShare,
			lmin, lmax, render.Num(float64(p.NI.Min), 4), render.Num(float64(p.NI.Max), 4), len(p.SignChanges))
	}
	tw.Flush()
	fmt.Fprintln(w)
	for _, p := range s.Pairings {
		fmt.Fprintf(w, "%s %s: %s\n", p.Label, p.Pairing, p.Verdict)
	}
	list := func(title string, b []sweep.Between) {
		if len(b) == 0 {
			return
		}
		fmt.Fprintf(w, "\n%s (%d):\n", title, len(b))
		for k, x := range b {
			if k == 5 {
				fmt.Fprintf(w, "  ... and %d more (see the summary file)\n", len(b)-5)
				break
			}
			fmt.Fprintf(w, "  %s %s\n", x.What, x.Describe(s.Axes))
		}
	}
	list("Best pairing switches", s.Switches)
	list("Gain matrix singular", s.Singular)
	points := func(title string, ws []sweep.Where) {
		if len(ws) == 0 {
			return
		}
		fmt.Fprintf(w, "\n%s (%d):\n", title, len(ws))
		for k, x := range ws {
			if k == 5 {
				fmt.Fprintf(w, "  ... and %d more\n", len(ws)-5)
				break
			}
			fmt.Fprintf(w, "  %s: %s\n", x.Describe(s.Axes), x.Reason)
		}
	}
	points("Failed points", s.Failed)
	points("Points outside the model's checks, left out of the figures above: the model does not hold there", s.Outside)
	if s.Caution != "" {
		fmt.Fprintf(w, "\n%s\n", render.Wrap(s.Caution, 80, ""))
	}
}

// progress is a progress bar on stderr, shown only on a terminal, without
// --quiet, and once the sweep has run for a second.
type progress struct {
	on    bool
	w     io.Writer
	total int
	start time.Time
	bar   *progressbar.ProgressBar
}

func newProgress(f *cli.Factory, quiet bool, total int) *progress {
	return &progress{on: f.IO.ErrTTY && !quiet && total > 0, w: f.IO.ErrOut, total: total, start: time.Now()}
}

func (p *progress) update(done, _ int) {
	if !p.on {
		return
	}
	if p.bar == nil {
		if time.Since(p.start) < time.Second {
			return
		}
		p.bar = progressbar.NewOptions(p.total, progressbar.OptionSetWriter(p.w), progressbar.OptionSetDescription("sweep"),
			progressbar.OptionShowCount(), progressbar.OptionSetPredictTime(true), progressbar.OptionClearOnFinish(),
			progressbar.OptionThrottle(100*time.Millisecond))
	}
	p.bar.Set(done)
}

func (p *progress) finish() {
	if p.bar != nil {
		p.bar.Finish()
	}
}
