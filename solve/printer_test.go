package solve

import (
	"context"
	"strings"
	"testing"
)

func TestPrinter(t *testing.T) {
	var b strings.Builder
	res, err := Newton(context.Background(), columnA.problem(), constant(41, 0.5), &Options{Recorder: Printer(&b)})
	if err != nil {
		t.Fatal(err)
	}
	lines := strings.Split(strings.TrimSpace(b.String()), "\n")
	if len(lines) != res.Iterations+1 || !strings.HasPrefix(lines[0], "method") || !strings.HasPrefix(lines[1], "newton ") {
		t.Errorf("trace:\n%s", b.String())
	}
}
