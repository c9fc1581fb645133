package model

import (
	"bytes"
	"flag"
	"os"
	"path/filepath"
	"strings"
	"testing"
)

var update = flag.Bool("update", false, "rewrite the golden files in testdata/errors")

// errorOptions are the expansion options some error cases need.
var errorOptions = map[string]*ExpandOptions{
	"override_unknown": {Constants: map[string]float64{"NX": 5}},
}

// TestErrorsGolden loads and expands every testdata/errors/NAME.yaml and
// compares the full error text with NAME.golden.
func TestErrorsGolden(t *testing.T) {
	files, err := filepath.Glob("testdata/errors/*.yaml")
	if err != nil {
		t.Fatal(err)
	}
	if len(files) < 30 {
		t.Fatalf("only %d error cases", len(files))
	}
	for _, path := range files {
		name := strings.TrimSuffix(filepath.Base(path), ".yaml")
		t.Run(name, func(t *testing.T) {
			data, err := os.ReadFile(path)
			if err != nil {
				t.Fatal(err)
			}
			var got bytes.Buffer
			f, err := Load(name+".yaml", bytes.NewReader(data))
			if err == nil {
				_, err = f.Expand(errorOptions[name])
			}
			if err == nil {
				t.Fatalf("%s loads and expands without error", path)
			}
			if _, ok := err.(ErrorList); !ok {
				t.Errorf("error is %T, want ErrorList", err)
			}
			PrintError(&got, err)
			golden := strings.TrimSuffix(path, ".yaml") + ".golden"
			if *update {
				if err := os.WriteFile(golden, got.Bytes(), 0o644); err != nil {
					t.Fatal(err)
				}
				return
			}
			want, err := os.ReadFile(golden)
			if err != nil {
				t.Fatalf("%v (run go test -update to create it)", err)
			}
			if got.String() != string(want) {
				t.Errorf("error text differs\n got:\n%s\nwant:\n%s", got.String(), want)
			}
		})
	}
}
