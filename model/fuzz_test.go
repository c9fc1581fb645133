package model

import (
	"bytes"
	"fmt"
	"os"
	"path/filepath"
	"testing"
	"time"
)

// FuzzLoad loads and expands arbitrary bytes: no input may panic or hang.
// The seed corpus is testdata/fuzz/FuzzLoad plus the example models and
// the error cases.
func FuzzLoad(f *testing.F) {
	for _, pattern := range []string{"../testdata/models/*.yaml", "testdata/errors/*.yaml"} {
		paths, _ := filepath.Glob(pattern)
		for _, p := range paths {
			data, err := os.ReadFile(p)
			if err == nil {
				f.Add(data)
			}
		}
	}
	f.Fuzz(func(t *testing.T, data []byte) {
		tm := time.AfterFunc(10*time.Second, func() { panic(fmt.Sprintf("slow input %q", data)) })
		defer tm.Stop()
		file, err := Load("fuzz.yaml", bytes.NewReader(data))
		if err != nil {
			if _, ok := err.(ErrorList); !ok {
				t.Fatalf("Load error is %T", err)
			}
			var b bytes.Buffer
			PrintError(&b, err)
			return
		}
		sys, err := file.Expand(&ExpandOptions{MaxSetSize: 2000, MaxScalars: 20000, MaxNodes: 200000})
		if err != nil {
			if _, ok := err.(ErrorList); !ok {
				t.Fatalf("Expand error is %T", err)
			}
			return
		}
		if len(sys.Equations) > 0 {
			sys.Incidence()
			sys.ParamIncidence()
		}
		for _, u := range sys.Unknowns {
			if _, _, ok := sys.Lookup(u.Name); !ok {
				t.Fatalf("Lookup(%q) fails", u.Name)
			}
		}
	})
}
