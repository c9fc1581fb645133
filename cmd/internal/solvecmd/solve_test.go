package solvecmd

import (
	"strings"
	"testing"

	"github.com/loopwright/loopwright/cmd/internal/cli"
)

// TestFlags checks that the command line lands in SolveOptions.
func TestFlags(t *testing.T) {
	var got *SolveOptions
	cmd := NewCmdSolve(cli.TestFactory(), func(o *SolveOptions) error { got = o; return nil })
	cmd.SetArgs([]string{"lib:column", "--set", "L=2.8 kmol/min", "--jacobian", "fd", "--trace", "--format", "csv"})
	if err := cmd.Execute(); err != nil {
		t.Fatal(err)
	}
	if got.Model != "lib:column" || got.Jacobian != "fd" || !got.Trace || got.Format != "csv" ||
		len(got.Flags.Sets) != 1 || got.Flags.Sets[0] != "L=2.8 kmol/min" {
		t.Errorf("options %+v", got)
	}
}

// TestRunJSON solves the syrup example and checks the operating point
// against its closed-form mass balance (common practice): f_out = f_conc +
// f_water, s_out = f_conc*s_conc/f_out.
func TestRunJSON(t *testing.T) {
	f := cli.TestFactory()
	opts := &SolveOptions{F: f, Model: "../../../testdata/models/syrup.yaml", Format: "json", Jacobian: "ad"}
	if err := solveRun(opts); err != nil {
		t.Fatal(err)
	}
	out := f.IO.Out.(interface{ String() string }).String()
	for _, want := range []string{`"converged": true`, `"value": 5000`, `"value": 0.104`} {
		if !strings.Contains(out, want) {
			t.Errorf("output lacks %s:\n%s", want, out)
		}
	}
}
