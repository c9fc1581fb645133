package library

import (
	"testing"

	"github.com/loopwright/loopwright/model"
)

// BenchmarkList measures listing the embedded templates (reads and
// summarises every file).
func BenchmarkList(b *testing.B) {
	lib := New("")
	for b.Loop() {
		if _, err := lib.List(); err != nil {
			b.Fatal(err)
		}
	}
}

// BenchmarkLoadExpandColumn measures lib:column from name to expanded
// System (41 stages).
func BenchmarkLoadExpandColumn(b *testing.B) {
	lib := New("")
	for b.Loop() {
		f, err := lib.Load("lib:column")
		if err != nil {
			b.Fatal(err)
		}
		if _, err := f.Expand(&model.ExpandOptions{}); err != nil {
			b.Fatal(err)
		}
	}
}

// BenchmarkSolveColumn measures load, expand, compile and Newton from the
// template's flat guesses.
func BenchmarkSolveColumn(b *testing.B) {
	for b.Loop() {
		solveTemplate(b, "column", nil, nil)
	}
}
