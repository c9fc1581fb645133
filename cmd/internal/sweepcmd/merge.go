package sweepcmd

import (
	"fmt"
	"io"
	"os"
	"sort"
	"strings"

	"github.com/spf13/cobra"

	"github.com/loopwright/loopwright/cmd/internal/cli"
	"github.com/loopwright/loopwright/interact/sweep"
)

// MergeOptions are the inputs of the merge command.
type MergeOptions struct {
	F       *cli.Factory
	Files   []string
	Summary string
	Out     string
	Format  string
	Plots   string
}

// NewCmdMerge returns the merge command. runF replaces the run function in tests.
func NewCmdMerge(f *cli.Factory, runF func(*MergeOptions) error) *cobra.Command {
	opts := &MergeOptions{F: f}
	cmd := &cobra.Command{
		Use:   "merge FILE...",
		Short: "Combine the files of a sharded sweep into one summary",
		Long: `Merge reads the per-point files written by 'loopwright sweep --shard K/N'
(one per shard, CSV or JSON Lines), checks that they belong to the same sweep
(same fingerprint), that every shard is there once and complete, and writes
the summary: the same summary a single unsharded run gives. --out also writes
the combined per-point file, in point order.`,
		Example: `  loopwright merge part-*.jsonl --summary column.json
  loopwright merge part-*.csv --out column.csv --plots plots/`,
		Args: cobra.MinimumNArgs(1),
		RunE: func(cmd *cobra.Command, args []string) error {
			opts.Files = args
			if runF != nil {
				return runF(opts)
			}
			return mergeRun(opts)
		},
	}
	fl := cmd.Flags()
	fl.StringVar(&opts.Summary, "summary", "", "write the summary as JSON to this file")
	fl.StringVar(&opts.Out, "out", "", "write the combined per-point file (.csv or .jsonl)")
	fl.StringVar(&opts.Format, "format", "", "format of --out: csv or jsonl (default: from the extension)")
	fl.StringVar(&opts.Plots, "plots", "", "write SVG plots into this directory")
	return cmd
}

func mergeRun(opts *MergeOptions) error {
	h, recs, err := Merge(opts.Files)
	if err != nil {
		return &cli.InputError{Err: err}
	}
	if opts.Out != "" {
		format := sweep.Format(opts.Format)
		if format == "" {
			if format, err = sweep.FormatFor(opts.Out); err != nil {
				return cli.FlagErrorf("%v", err)
			}
		}
		if err := writeAtomic(opts.Out, func(w io.Writer) error { return writeRecords(w, format, h, recs) }); err != nil {
			return err
		}
	}
	return finish(opts.F, h, recs, opts.Summary, opts.Plots)
}

// Merge reads shard files and returns the whole sweep's header (shard
// cleared) and records in point order. Every shard 0..N-1 must be present
// once and complete.
func Merge(paths []string) (*sweep.Header, []sweep.Record, error) {
	var (
		h     *sweep.Header
		recs  []sweep.Record
		shard = map[int]string{}
		n     = -1
	)
	for _, path := range paths {
		fh, err := os.Open(path)
		if err != nil {
			return nil, nil, err
		}
		file, err := sweep.Read(path, fh)
		fh.Close()
		if err != nil {
			return nil, nil, err
		}
		fhd := file.Header
		if h == nil {
			c := fhd
			c.Shard = sweep.Shard{}
			h = &c
			n = max(fhd.Shard.N, 1)
		}
		if fhd.Fingerprint != h.Fingerprint {
			return nil, nil, fmt.Errorf("%s belongs to another sweep than %s (fingerprints %s and %s)", path, paths[0], fhd.Fingerprint, h.Fingerprint)
		}
		if max(fhd.Shard.N, 1) != n {
			return nil, nil, fmt.Errorf("%s is shard %s, %s is of %d shards", path, fhd.Shard, paths[0], n)
		}
		if prev, ok := shard[fhd.Shard.K]; ok {
			return nil, nil, fmt.Errorf("%s and %s are both shard %s", prev, path, fhd.Shard)
		}
		shard[fhd.Shard.K] = path
		plan, err := sweep.NewPlan(fhd.Axes, fhd.Design)
		if err != nil {
			return nil, nil, fmt.Errorf("%s: %w", path, err)
		}
		want := plan.PointsOf(fhd.Shard)
		if len(file.Records) != len(want) {
			return nil, nil, fmt.Errorf("%s holds %d of its shard's %d points: finish it with 'loopwright sweep ... --shard %s --resume' first", path, len(file.Records), len(want), fhd.Shard)
		}
		recs = append(recs, file.Records...)
	}
	var missing []string
	for k := 0; k < n; k++ {
		if _, ok := shard[k]; !ok {
			missing = append(missing, fmt.Sprintf("%d/%d", k, n))
		}
	}
	if len(missing) > 0 {
		return nil, nil, fmt.Errorf("shards missing: %s", strings.Join(missing, ", "))
	}
	sort.Slice(recs, func(i, j int) bool { return recs[i].Index < recs[j].Index })
	for i := range recs {
		if recs[i].Index != i {
			return nil, nil, fmt.Errorf("the files do not hold point %d exactly once", i)
		}
	}
	return h, recs, nil
}
