package sweepcmd

import (
	"bytes"
	"context"
	"errors"
	"os"
	"path/filepath"
	"strings"
	"sync/atomic"
	"testing"

	"github.com/loopwright/loopwright/cmd/internal/cli"
	"github.com/loopwright/loopwright/cmd/internal/iostreams"
)

const columnFile = "../../../library/templates/column.yaml"

func columnArgs(extra ...string) []string {
	return append([]string{columnFile, "--axis", "zF=0.45:0.55:4", "--axis", "F=0.9 kmol/min:1.1 kmol/min:3", "-q"}, extra...)
}

func factory(ctx context.Context) (*cli.Factory, *bytes.Buffer) {
	ios, _, out, _ := iostreams.Test()
	f := cli.TestFactory()
	f.IO, f.Context = ios, ctx
	return f, out
}

// run executes the sweep command with args; hook, if set, is called after
// each record written.
func run(t *testing.T, ctx context.Context, args []string, hook func()) (string, error) {
	t.Helper()
	return runHooked(t, ctx, args, hook, nil)
}

// runHooked is run with a second hook, called before a worker solves a point.
func runHooked(t *testing.T, ctx context.Context, args []string, onRecord, onPoint func()) (string, error) {
	t.Helper()
	f, out := factory(ctx)
	cmd := NewCmdSweep(f, func(o *SweepOptions) error { o.onRecord, o.onPoint = onRecord, onPoint; return sweepRun(o) })
	cmd.SetArgs(args)
	cmd.SetOut(out)
	cmd.SetErr(out)
	err := cmd.ExecuteContext(ctx)
	return out.String(), err
}

func TestSweepFlags(t *testing.T) {
	for _, tc := range []struct {
		args []string
		want string // error text, "" for none
	}{
		{[]string{"m.yaml", "--resume"}, "--resume needs --out"},
		{[]string{"m.yaml", "--design", "sobol"}, `--design "sobol"`},
		{[]string{"m.yaml", "--design", "lhs"}, "needs --points"},
		{[]string{"m.yaml", "--points", "5"}, "--points is for"},
		{[]string{"m.yaml", "--design", "lhs", "--points", "50", "--seed", "4", "-j", "3", "--shard", "1/4"}, ""},
	} {
		var got *SweepOptions
		cmd := NewCmdSweep(cli.TestFactory(), func(o *SweepOptions) error { got = o; return nil })
		cmd.SetArgs(tc.args)
		cmd.SetOut(&bytes.Buffer{})
		cmd.SetErr(&bytes.Buffer{})
		err := cmd.Execute()
		if tc.want == "" {
			if err != nil || got == nil || got.Points != 50 || got.Seed != 4 || got.Jobs != 3 || got.Shard != "1/4" {
				t.Errorf("%v: err %v, opts %+v", tc.args, err, got)
			}
			continue
		}
		var fe *cli.FlagError
		if err == nil || !strings.Contains(err.Error(), tc.want) || !errors.As(err, &fe) {
			t.Errorf("%v: err %v, want a flag error with %q", tc.args, err, tc.want)
		}
	}
}

func TestAxisFlagErrors(t *testing.T) {
	for _, tc := range []struct{ axis, want string }{
		{"zF=0.4:0.6", "3 or 4"},
		{"nope=0.4:0.6:3", "no parameter, input or disturbance nope"},
		{"x[3]=0.4:0.6:3", "an unknown"},
		{"F=0.9 kg:1.1 kmol/min:3", "FROM"},
		{"zF=0.4:0.6:three", "POINTS"},
		{"zF=0.4:0.6:3:cubic", "only log"},
		{"zF=-1:0.6:3:log", "above zero"},
	} {
		_, err := run(t, context.Background(), []string{columnFile, "--axis", tc.axis}, nil)
		if err == nil || !strings.Contains(err.Error(), tc.want) {
			t.Errorf("--axis %s: err %v, want %q", tc.axis, err, tc.want)
		}
	}
}

// Done-when: a sweep over two axes of the column template gives the
// per-point file, the summary with verdicts and the plots; killing it
// half-way and resuming gives the same files as an uninterrupted run.
func TestSweepKillAndResume(t *testing.T) {
	// Enough points that the workers cannot finish them all before the
	// collector, stopping after 5, cancels them.
	args := func(extra ...string) []string {
		return append([]string{columnFile, "--axis", "zF=0.45:0.55:16", "--axis", "F=0.9 kmol/min:1.1 kmol/min:25", "-q"}, extra...)
	}
	for _, ext := range []string{"jsonl", "csv"} {
		dir := t.TempDir()
		full := filepath.Join(dir, "full."+ext)
		stdout, err := run(t, context.Background(), args("--out", full, "--summary", filepath.Join(dir, "full.json"), "--plots", filepath.Join(dir, "plots"), "-j", "2"), nil)
		if err != nil {
			t.Fatalf("%s: %v\n%s", ext, err, stdout)
		}
		for _, want := range []string{"P1 yD:L xB:V", "nominal best", "400 points, 400 converged", "Steady-state screening"} {
			if !strings.Contains(stdout, want) {
				t.Errorf("%s: stdout lacks %q:\n%s", ext, want, stdout)
			}
		}
		plots, _ := filepath.Glob(filepath.Join(dir, "plots", "*.svg"))
		if len(plots) != 3 {
			t.Errorf("%s: plots %v, want λ along 2 axes and a heat map", ext, plots)
		}

		part := filepath.Join(dir, "part."+ext)
		ctx, cancel := context.WithCancel(context.Background())
		// Cancel as the 30th point starts: the workers stop before their
		// next point, so the run stops before the end however fast they are.
		var started atomic.Int64
		_, err = runHooked(t, ctx, args("--out", part, "--summary", filepath.Join(dir, "part.json"), "-j", "2"), nil, func() {
			if started.Add(1) == 30 {
				cancel()
			}
		})
		cancel()
		if !errors.Is(err, cli.ErrInterrupted) || cli.CodeFor(err) != cli.ExitInterrupted {
			t.Fatalf("%s: interrupted run: err %v, want exit code %d", ext, err, cli.ExitInterrupted)
		}
		if _, err := os.Stat(filepath.Join(dir, "part.json")); err == nil {
			t.Errorf("%s: an interrupted run wrote a summary", ext)
		}
		got, _ := os.ReadFile(part)
		if lines := strings.Count(string(got), "\n"); lines < 5 {
			t.Errorf("%s: only %d lines on disk after 30 points", ext, lines)
		}
		// A half-written last line, as a kill -9 during a write leaves it.
		os.WriteFile(part, append(got, []byte("{\"i\":99,\"at\"")...), 0o644)

		if lines := strings.Count(string(got), "\n"); lines >= 400 {
			t.Errorf("%s: %d lines on disk: the run was not stopped before the end", ext, lines)
		}
		if out, err := run(t, context.Background(), args("--out", part, "--summary", filepath.Join(dir, "part.json"), "--resume", "-j", "1"), nil); err != nil {
			t.Fatalf("%s: resume: %v\n%s", ext, err, out)
		}
		for _, pair := range [][2]string{{full, part}, {filepath.Join(dir, "full.json"), filepath.Join(dir, "part.json")}} {
			a, _ := os.ReadFile(pair[0])
			b, _ := os.ReadFile(pair[1])
			if len(a) == 0 || !bytes.Equal(a, b) {
				t.Errorf("%s: %s and %s differ after kill and resume", ext, filepath.Base(pair[0]), filepath.Base(pair[1]))
			}
		}
	}
}

// Done-when: two shards merged give the same summary as one run.
func TestShardsMerge(t *testing.T) {
	dir := t.TempDir()
	one := filepath.Join(dir, "one.json")
	if _, err := run(t, context.Background(), columnArgs("--out", filepath.Join(dir, "all.jsonl"), "--summary", one), nil); err != nil {
		t.Fatal(err)
	}
	var parts []string
	for _, k := range []string{"0/2", "1/2"} {
		p := filepath.Join(dir, "part"+k[:1]+".jsonl")
		parts = append(parts, p)
		if _, err := run(t, context.Background(), columnArgs("--out", p, "--shard", k), nil); err != nil {
			t.Fatal(err)
		}
	}
	f, out := factory(context.Background())
	merged := filepath.Join(dir, "merged.json")
	cmd := NewCmdMerge(f, nil)
	cmd.SetArgs(append(parts, "--summary", merged, "--out", filepath.Join(dir, "merged.jsonl")))
	if err := cmd.Execute(); err != nil {
		t.Fatalf("merge: %v\n%s", err, out)
	}
	for _, pair := range [][2]string{{one, merged}, {"all.jsonl", "merged.jsonl"}} {
		a, _ := os.ReadFile(filepath.Join(dir, filepath.Base(pair[0])))
		b, _ := os.ReadFile(filepath.Join(dir, filepath.Base(pair[1])))
		if len(a) == 0 || !bytes.Equal(a, b) {
			t.Errorf("%s and %s differ", pair[0], pair[1])
		}
	}
	// A missing shard is an input error naming it.
	_, _, err := Merge(parts[:1])
	if err == nil || !strings.Contains(err.Error(), "shards missing: 1/2") {
		t.Errorf("merge of one shard: %v", err)
	}
}

func TestResumeRefusesAnotherSweep(t *testing.T) {
	dir := t.TempDir()
	p := filepath.Join(dir, "a.jsonl")
	if _, err := run(t, context.Background(), columnArgs("--out", p), nil); err != nil {
		t.Fatal(err)
	}
	_, err := run(t, context.Background(), []string{columnFile, "--axis", "zF=0.45:0.55:5", "--out", p, "--resume", "-q"}, nil)
	if err == nil || !strings.Contains(err.Error(), "belongs to another sweep") || cli.CodeFor(err) != cli.ExitBadInput {
		t.Errorf("err %v, want a refusal naming the other sweep", err)
	}
}
