package jacobian

import (
	"math"
	"math/rand/v2"
	"path/filepath"
	"testing"

	"github.com/loopwright/loopwright/model"
)

// TestModelFiles loads every model under testdata/models and the library's
// templates and checks every derivative against central differences, at the
// model's guess and at a point moved off it.
func TestModelFiles(t *testing.T) {
	var files []string
	for _, pat := range []string{"../testdata/models/*.yaml", "../library/templates/*.yaml"} {
		m, err := filepath.Glob(pat)
		if err != nil {
			t.Fatal(err)
		}
		files = append(files, m...)
	}
	if len(files) == 0 {
		t.Fatal("no model files found under testdata/models or library/templates")
	}
	rnd := rand.New(rand.NewPCG(1, 1))
	for _, file := range files {
		t.Run(filepath.Base(filepath.Dir(file))+"/"+filepath.Base(file), func(t *testing.T) {
			f, err := model.LoadFile(file)
			if err != nil {
				t.Fatalf("load: %v", err)
			}
			sys, err := f.Expand(nil)
			if err != nil {
				t.Fatalf("expand: %v", err)
			}
			prog := mustCompile(t, sys)
			x, p := guess(sys)
			t.Run("guess", func(t *testing.T) { checkAgainstFD(t, prog, x, p, 1e-6) })
			e := prog.NewEval()
			defs, checks := nanSlice(prog.NumDefines()), nanSlice(prog.NumChecks())
			if err := e.Defines(defs, x, p); err != nil {
				t.Errorf("defines at the guess: %v", err)
			}
			if err := e.Checks(checks, x, p); err != nil {
				t.Errorf("checks at the guess: %v", err)
			}

			// Move every unknown by up to 2 % of its magnitude (or of its
			// range), staying inside its bounds.
			for i, s := range sys.Unknowns {
				scale := math.Abs(x[i])
				if scale == 0 && !math.IsInf(s.Max-s.Min, 0) {
					scale = s.Max - s.Min
				}
				if scale == 0 {
					scale = 1
				}
				x[i] = min(max(x[i]+0.02*scale*(2*rnd.Float64()-1), s.Min), s.Max)
			}
			t.Run("perturbed", func(t *testing.T) { checkAgainstFD(t, prog, x, p, 1e-6) })
		})
	}
}
