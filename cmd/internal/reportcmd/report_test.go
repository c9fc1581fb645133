package reportcmd

import (
	"bytes"
	"context"
	"errors"
	"os"
	"path/filepath"
	"regexp"
	"strings"
	"testing"

	"github.com/loopwright/loopwright/cmd/internal/cli"
	"github.com/loopwright/loopwright/cmd/internal/iostreams"
)

const blender = "../../../library/templates/blender.yaml"

func TestReportFlags(t *testing.T) {
	for _, tc := range []struct {
		args  []string
		want  string // flag error text, "" for none
		check func(*ReportOptions) bool
	}{
		{[]string{blender, "-o", "x.html"}, "", func(o *ReportOptions) bool {
			return o.Model == blender && o.Output == "x.html" && !o.SweepSet && o.Scaling == "auto" && o.Top == 10 && o.Jobs == 0
		}},
		{[]string{blender, "--output", "-", "--no-sweep", "--scaling", "nominal", "--top", "0", "-j", "2", "--set", "f_water=2800"}, "", func(o *ReportOptions) bool {
			return o.Output == "-" && o.SweepSet && !o.Sweep && o.Scaling == "nominal" && o.Top == 0 && o.Jobs == 2 && len(o.Flags.Sets) == 1
		}},
		{[]string{blender, "-o", "x.html", "--sweep"}, "", func(o *ReportOptions) bool { return o.SweepSet && o.Sweep }},
		{[]string{blender}, "-o FILE.html", nil},
		{[]string{blender, "-o", "x.html", "--sweep", "--no-sweep"}, "contradict", nil},
		{[]string{blender, "-o", "x.html", "-j", "-1"}, "-j -1", nil},
		{[]string{blender, "-o", "x.html", "--top", "-3"}, "--top -3", nil},
	} {
		var got *ReportOptions
		cmd := NewCmdReport(cli.TestFactory(), func(o *ReportOptions) error { got = o; return nil })
		cmd.SetArgs(tc.args)
		cmd.SetOut(&bytes.Buffer{})
		cmd.SetErr(&bytes.Buffer{})
		err := cmd.Execute()
		if tc.want == "" {
			if err != nil || got == nil || !tc.check(got) {
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

// run executes the report command with buffered streams.
func run(t *testing.T, args ...string) (stdout, stderr string, err error) {
	t.Helper()
	ios, _, out, errOut := iostreams.Test()
	f := cli.TestFactory()
	f.IO = ios
	cmd := NewCmdReport(f, nil)
	cmd.SetArgs(args)
	cmd.SetOut(out)
	cmd.SetErr(errOut)
	err = cmd.ExecuteContext(context.Background())
	return out.String(), errOut.String(), err
}

// TestReportBlender writes the report of the blender template, envelope
// sweep included, to standard output. The blend's relative gains equal the
// flow fractions (checkvalues.md §3, general result [R]): at 2000 kg/h
// caustic and 3000 kg/h water, λ(f_out, f_caustic) = 0.4 and
// λ(f_out, f_water) = 0.6, so the total rate pairs with the water.
func TestReportBlender(t *testing.T) {
	html, stderr, err := run(t, blender, "-o", "-", "-j", "1")
	if err != nil {
		t.Fatalf("%v\n%s", err, stderr)
	}
	if stderr != "" {
		t.Errorf("stderr: %q", stderr)
	}
	if !strings.HasPrefix(html, "<!DOCTYPE html>") || !strings.HasSuffix(html, "</html>\n") {
		t.Fatal("standard output is not one HTML document")
	}
	rga := regexp.MustCompile(`(?s)<div class="tbl" id="rga">.*?</table>`).FindString(html)
	for _, want := range []string{
		`<th scope="row">f_out</th><td class="num rga l2">0.4<span class="mark">◑</span></td><td class="num rga l1 paired"`,
		`<strong>0.6</strong>`,
	} {
		if !strings.Contains(rga, want) {
			t.Errorf("RGA table lacks %s:\n%s", want, rga)
		}
	}
	for _, want := range []string{
		"f_out-f_water, w_out-f_caustic", // the top pairing
		`id="envelope-pairings"`, `<figure class="plot">`, "Scaling: span",
		"loopwright test", // the generator line carries the version
	} {
		if !strings.Contains(html, want) {
			t.Errorf("report lacks %q", want)
		}
	}
	// The envelope has two axes of 7 and 11 points: two λ plots and a heat map.
	if n := strings.Count(html, "<svg"); n != 3 {
		t.Errorf("%d plots, want 3", n)
	}

	// The report does not depend on the number of sweep workers.
	html2, _, err := run(t, blender, "-o", "-", "-j", "2")
	if err != nil {
		t.Fatal(err)
	}
	if html2 != html {
		t.Error("reports with -j 1 and -j 2 differ")
	}
}

func TestReportFile(t *testing.T) {
	path := filepath.Join(t.TempDir(), "blend.html")
	stdout, stderr, err := run(t, blender, "-o", path, "--no-sweep", "--scaling", "none", "--set", "f_water=4000")
	if err != nil {
		t.Fatalf("%v\n%s", err, stderr)
	}
	if stdout != "" {
		t.Errorf("stdout: %q", stdout)
	}
	if !strings.HasPrefix(stderr, "wrote "+path+" (") {
		t.Errorf("stderr %q", stderr)
	}
	b, err := os.ReadFile(path)
	if err != nil {
		t.Fatal(err)
	}
	html := string(b)
	for _, want := range []string{"No envelope sweep in this report", "Scaling: none", `<td class="num">4000</td>`} {
		if !strings.Contains(html, want) {
			t.Errorf("report lacks %q", want)
		}
	}
	if strings.Contains(html, "<svg") {
		t.Error("--no-sweep report has plots")
	}
	if left, _ := filepath.Glob(filepath.Join(filepath.Dir(path), ".*tmp*")); len(left) > 0 {
		t.Errorf("temporary files left: %v", left)
	}
}

// TestReportNoConvergence: the report is still written and says the
// operating point was not found; the exit status is a finding.
func TestReportNoConvergence(t *testing.T) {
	path := filepath.Join(t.TempDir(), "noroot.html")
	_, stderr, err := run(t, filepath.Join("testdata", "noroot.yaml"), "-o", path)
	var fe *cli.FindingError
	if !errors.As(err, &fe) || cli.CodeFor(err) != cli.ExitFinding || !strings.Contains(err.Error(), "the operating point was not found") {
		t.Fatalf("err %v, want a finding about the operating point", err)
	}
	if !strings.HasPrefix(stderr, "wrote ") {
		t.Errorf("stderr %q", stderr)
	}
	b, err := os.ReadFile(path)
	if err != nil {
		t.Fatal(err)
	}
	for _, want := range []string{"The operating point was not found:", "hit bound", "The gains were not computed: no operating point"} {
		if !strings.Contains(string(b), want) {
			t.Errorf("report lacks %q", want)
		}
	}
}

func TestReportErrors(t *testing.T) {
	for _, tc := range []struct {
		args []string
		code cli.ExitCode
		want string
	}{
		{[]string{filepath.Join("testdata", "noroot.yaml"), "-o", "-", "--sweep"}, cli.ExitBadInput, "declares no envelope"},
		{[]string{filepath.Join("testdata", "missing.yaml"), "-o", "-"}, cli.ExitBadInput, "missing.yaml"},
		{[]string{blender, "-o", "-", "--scaling", "wide"}, cli.ExitBadInput, "--scaling"},
		{[]string{blender, "-o", filepath.Join(t.TempDir(), "no", "such", "dir.html"), "--no-sweep"}, cli.ExitBadInput, "writing the report"},
	} {
		_, _, err := run(t, tc.args...)
		if err == nil || cli.CodeFor(err) != tc.code || !strings.Contains(err.Error(), tc.want) {
			t.Errorf("%v: err %v (exit %d), want exit %d with %q", tc.args, err, cli.CodeFor(err), tc.code, tc.want)
		}
	}
}
