package report

import (
	"context"
	"os"
	"os/exec"
	"path/filepath"
	"regexp"
	"strings"
	"testing"
	"time"

	"github.com/loopwright/loopwright/interact"
)

// chromium finds a Chromium binary: $LOOPWRIGHT_CHROMIUM, else chromium or
// chromium-browser on the PATH (Debian's package installs /usr/bin/chromium).
func chromium(t *testing.T) string {
	t.Helper()
	if p := os.Getenv("LOOPWRIGHT_CHROMIUM"); p != "" {
		return p
	}
	for _, name := range []string{"chromium", "chromium-browser"} {
		if p, err := exec.LookPath(name); err == nil {
			return p
		}
	}
	t.Skip("no Chromium browser found (install Debian's chromium package, or set LOOPWRIGHT_CHROMIUM): the report was not checked in a browser")
	return ""
}

// loadInBrowser opens path in headless Chromium with every network name
// unresolvable and returns the DOM after load and the console messages.
func loadInBrowser(t *testing.T, bin, path string) (dom string, console []string) {
	t.Helper()
	ctx, cancel := context.WithTimeout(context.Background(), 90*time.Second)
	defer cancel()
	cmd := exec.CommandContext(ctx, bin,
		"--headless", "--no-sandbox", "--disable-gpu", "--disable-quic", "--no-first-run",
		"--disable-background-networking", "--disable-component-update", "--disable-sync",
		"--disable-extensions", "--host-resolver-rules=MAP * ~NOTFOUND",
		"--user-data-dir="+t.TempDir(), "--enable-logging=stderr", "--v=0",
		"--dump-dom", "file://"+path)
	var stderr strings.Builder
	cmd.Stderr = &stderr
	out, err := cmd.Output()
	if ctx.Err() != nil {
		t.Fatalf("chromium did not finish within 90 s\n%s", stderr.String())
	}
	if err != nil {
		t.Fatalf("chromium: %v\n%s", err, stderr.String())
	}
	for _, line := range strings.Split(stderr.String(), "\n") {
		if strings.Contains(line, ":CONSOLE") {
			console = append(console, line)
		}
	}
	return string(out), console
}

// TestBrowserHarness proves the harness sees what it must: a console error
// on a page built to raise one.
func TestBrowserHarness(t *testing.T) {
	bin := chromium(t)
	path := filepath.Join(t.TempDir(), "bad.html")
	if err := os.WriteFile(path, []byte(`<!DOCTYPE html><html><body><p id="x">x</p><script>console.error("planted error")</script></body></html>`), 0o644); err != nil {
		t.Fatal(err)
	}
	dom, console := loadInBrowser(t, bin, path)
	if !strings.Contains(dom, `id="x"`) {
		t.Errorf("DOM dump lacks the page's element:\n%s", dom)
	}
	if len(console) == 0 || !strings.Contains(strings.Join(console, "\n"), "planted error") {
		t.Errorf("the planted console error was not captured: %q", console)
	}
}

// TestBrowserReport renders the mixer report (with its envelope plot) in
// headless Chromium: it must load with no console message at all (the
// report has no scripts and fetches nothing, so any message is a fault)
// and the DOM must hold the key tables, filled.
func TestBrowserReport(t *testing.T) {
	bin := chromium(t)
	in := mixerInput(t, interact.ScaleSpan)
	in.Sweep = mixerSweep(t, in)
	path := filepath.Join(t.TempDir(), "mixer report.html")
	if err := os.WriteFile(path, renderHTML(t, in), 0o644); err != nil {
		t.Fatal(err)
	}
	dom, console := loadInBrowser(t, bin, path)
	if len(console) > 0 {
		t.Errorf("console messages while loading the report:\n%s", strings.Join(console, "\n"))
	}
	n := len(in.Analysis.Outputs)
	for _, tc := range []struct {
		id   string
		rows int // body rows the table must have
	}{
		{"inputs", len(in.System.Inputs)},
		{"disturbances", len(in.System.Disturbances)},
		{"variables", len(in.System.Unknowns)},
		{"output-values", len(in.System.Outputs)},
		{"gain-k", len(in.Gains.Outputs)},
		{"gain-kd", len(in.Gains.Outputs)},
		{"gain-k-scaled", len(in.Gains.Outputs)},
		{"rga", n},
		{"pairings", len(in.Analysis.Pairings)},
		{"integrity-1", (1 << n) - n - 2},
		{"sensitivity", n},
		{"rdg-1", n},
		{"envelope-pairings", len(in.Sweep.Summary.Pairings)},
	} {
		re := regexp.MustCompile(`(?s)<div class="tbl" id="` + regexp.QuoteMeta(tc.id) + `">.*?<tbody>(.*?)</tbody>`)
		m := re.FindStringSubmatch(dom)
		if m == nil {
			t.Errorf("table %s missing from the rendered DOM", tc.id)
			continue
		}
		if got := strings.Count(m[1], "<tr"); got != tc.rows {
			t.Errorf("table %s has %d rows in the browser, want %d", tc.id, got, tc.rows)
		}
	}
	for _, want := range []string{`id="caution"`, "<svg", `class="verdict`, "Relative gain array"} {
		if !strings.Contains(dom, want) {
			t.Errorf("rendered DOM lacks %q", want)
		}
	}
	// The browser parsed the inline SVG as SVG: its paths survived.
	if !regexp.MustCompile(`(?s)<figure class="plot">\s*<svg[^>]*viewBox="0 0 432 288".*?<path`).MatchString(dom) {
		t.Error("the envelope plot did not survive as inline SVG")
	}
}
