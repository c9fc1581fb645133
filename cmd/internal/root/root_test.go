package root

import (
	"bytes"
	"flag"
	"fmt"
	"os"
	"path/filepath"
	"strings"
	"testing"

	"github.com/loopwright/loopwright/cmd/internal/cli"
	"github.com/loopwright/loopwright/cmd/internal/iostreams"
)

var update = flag.Bool("update", false, "rewrite the golden files in testdata/")

// run executes a command line with buffered streams and an empty user
// library, returning what a user would see.
func run(t *testing.T, args ...string) (stdout, stderr string, code cli.ExitCode) {
	t.Helper()
	f := cli.TestFactory()
	ios, _, out, errOut := iostreams.Test()
	f.IO = ios
	empty := t.TempDir()
	f.Getenv = func(k string) string {
		if k == "LOOPWRIGHT_LIBRARY" {
			return empty
		}
		return ""
	}
	code = Run(f, args)
	return out.String(), errOut.String(), code
}

// TestGolden runs whole command lines, end to end, and compares what they
// print and their exit codes with golden files. The numbers they show are
// checked against published values in the packages that compute them; here
// the point is the wiring and the words.
func TestGolden(t *testing.T) {
	// Paths are relative to the repository root so that messages read as a
	// user would see them.
	if err := os.Chdir("../../.."); err != nil {
		t.Fatal(err)
	}
	tests := []struct {
		name string
		args []string
		code cli.ExitCode
	}{
		{"check-column", []string{"check", "testdata/models/column.yaml"}, cli.ExitOK},
		{"check-syrup-json", []string{"check", "testdata/models/syrup.yaml", "--format", "json"}, cli.ExitOK},
		{"check-template", []string{"check", "lib:column", "--const", "NT=21", "--const", "NF=11"}, cli.ExitOK},
		{"solve-syrup", []string{"solve", "testdata/models/syrup.yaml"}, cli.ExitOK},
		{"solve-syrup-set", []string{"solve", "testdata/models/syrup.yaml", "--set", "f_conc=1000 kg/h", "--format", "csv"}, cli.ExitOK},
		{"gains-syrup", []string{"gains", "testdata/models/syrup.yaml"}, cli.ExitOK},
		{"pair-syrup", []string{"pair", "testdata/models/syrup.yaml"}, cli.ExitOK},
		{"pair-syrup-json", []string{"pair", "testdata/models/syrup.yaml", "--format", "json"}, cli.ExitOK},
		{"pair-wood-berry-csv", []string{"pair", "--gains", "interact/gainfile/testdata/wood-berry.csv"}, cli.ExitOK},
		{"library-list", []string{"library", "list"}, cli.ExitOK},
		{"bad-format", []string{"solve", "testdata/models/syrup.yaml", "--format", "xml"}, cli.ExitBadInput},
		{"bad-const", []string{"check", "lib:column", "--const", "NT"}, cli.ExitBadInput},
		{"bad-template", []string{"check", "lib:colum"}, cli.ExitBadInput},
		{"missing-file", []string{"check", "testdata/models/nothing-here.yaml"}, cli.ExitBadInput},
		{"both-sources", []string{"pair", "lib:column", "--gains", "x.csv"}, cli.ExitBadInput},
		{"no-source", []string{"pair"}, cli.ExitBadInput},
		{"unknown-set", []string{"solve", "testdata/models/syrup.yaml", "--set", "f_cnc=3"}, cli.ExitBadInput},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			out, errOut, code := run(t, tt.args...)
			if code != tt.code {
				t.Errorf("exit code %d, want %d\nstderr: %s", code, tt.code, errOut)
			}
			got := fmt.Sprintf("$ loopwright %s\n%s--- stderr ---\n%s--- exit %d ---\n", strings.Join(tt.args, " "), out, errOut, code)
			golden := filepath.Join("cmd/internal/root/testdata", tt.name+".golden")
			if *update {
				if err := os.WriteFile(golden, []byte(got), 0o644); err != nil {
					t.Fatal(err)
				}
				return
			}
			want, err := os.ReadFile(golden)
			if err != nil {
				t.Fatalf("%v (run with -update to create it)", err)
			}
			if !bytes.Equal(want, []byte(got)) {
				t.Errorf("output differs from %s (run with -update after checking):\n%s", golden, got)
			}
		})
	}
}

func TestVersion(t *testing.T) {
	out, _, code := run(t, "--version")
	if code != cli.ExitOK || !strings.HasPrefix(out, "loopwright ") {
		t.Errorf("--version printed %q with code %d", out, code)
	}
}

func TestCodeFor(t *testing.T) {
	tests := []struct {
		err  error
		want cli.ExitCode
	}{
		{nil, cli.ExitOK},
		{cli.FlagErrorf("bad"), cli.ExitBadInput},
		{&cli.InputError{Err: fmt.Errorf("x")}, cli.ExitBadInput},
		{cli.Findingf("x"), cli.ExitFinding},
		{fmt.Errorf("wrapped: %w", cli.ErrInterrupted), cli.ExitInterrupted},
	}
	for _, tt := range tests {
		if got := cli.CodeFor(tt.err); got != tt.want {
			t.Errorf("CodeFor(%v) = %d, want %d", tt.err, got, tt.want)
		}
	}
}
