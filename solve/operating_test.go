package solve

import (
	"context"
	"math"
	"path/filepath"
	"testing"

	"github.com/loopwright/loopwright/jacobian"
	"github.com/loopwright/loopwright/model"
)

func loadModel(t testing.TB, name string) (*model.System, *jacobian.Program) {
	t.Helper()
	f, err := model.LoadFile(filepath.Join("..", "testdata", "models", name))
	if err != nil {
		t.Fatal(err)
	}
	sys, err := f.Expand(nil)
	if err != nil {
		t.Fatal(err)
	}
	prog, err := jacobian.Compile(sys)
	if err != nil {
		t.Fatal(err)
	}
	return sys, prog
}

func unknown(t *testing.T, sys *model.System, x []float64, name string) float64 {
	t.Helper()
	for j, u := range sys.Unknowns {
		if u.Name == name {
			return x[j]
		}
	}
	t.Fatalf("no unknown %q", name)
	return 0
}

// TestOperatingColumnYAML solves testdata/models/column.yaml (column A with
// L = 2.706, V = 3.206 kmol/min) from its guesses. Sources: COLA,
// /work/shared/checkvalues.md §2a: yD = 0.99, xB = 0.01 for these flows;
// the bench peer (/work/shared/bench/README.md, reference numbers) gives
// 0.989996 and 0.010004 to 6 digits.
func TestOperatingColumnYAML(t *testing.T) {
	sys, prog := loadModel(t, "column.yaml")
	res, err := Operating(context.Background(), prog, sys, nil, nil, nil)
	if err != nil {
		t.Fatal(err)
	}
	if top := unknown(t, sys, res.X, "x[41]"); math.Abs(top-0.989996) > 1e-6 {
		t.Errorf("x[41] = %.7f, want 0.989996 (bench peer), 0.99 (COLA)", top)
	}
	if bot := unknown(t, sys, res.X, "x[1]"); math.Abs(bot-0.010004) > 1e-6 {
		t.Errorf("x[1] = %.7f, want 0.010004 (bench peer), 0.01 (COLA)", bot)
	}
}

// TestOperatingSyrupYAML: the syrup dilution (an invented example of
// model-format.md): f_out = 800 + 4200 kg/h, s_out = 800·0.65/5000 = 0.104
// (mass balances, exact; the bench peer's table agrees).
func TestOperatingSyrupYAML(t *testing.T) {
	sys, prog := loadModel(t, "syrup.yaml")
	res, err := Operating(context.Background(), prog, sys, nil, nil, nil)
	if err != nil {
		t.Fatal(err)
	}
	if f := unknown(t, sys, res.X, "f_out"); math.Abs(f-5000.0/3600) > 1e-12 {
		t.Errorf("f_out = %v kg/s, want %v", f, 5000.0/3600)
	}
	if s := unknown(t, sys, res.X, "s_out"); math.Abs(s-0.104) > 1e-12 {
		t.Errorf("s_out = %v, want 0.104", s)
	}
	if res.Blocks != 2 || res.Method != "newton+blocks" {
		t.Errorf("blocks %d method %q, want 2 blocks solved in order", res.Blocks, res.Method)
	}
}

func BenchmarkOperatingColumnYAML(b *testing.B) {
	sys, prog := loadModel(b, "column.yaml")
	b.ReportAllocs()
	for b.Loop() {
		if _, err := Operating(context.Background(), prog, sys, nil, nil, nil); err != nil {
			b.Fatal(err)
		}
	}
}

// BenchmarkOperatingColumn4YAML is a cold solve of the 200-stage,
// 4-component column built from constants in testdata/models/column4.yaml
// (800 unknowns, one block).
func BenchmarkOperatingColumn4YAML(b *testing.B) {
	sys, prog := loadModel(b, "column4.yaml")
	b.ReportAllocs()
	for b.Loop() {
		if _, err := Operating(context.Background(), prog, sys, nil, nil, nil); err != nil {
			b.Fatal(err)
		}
	}
}

// BenchmarkSolverSmallWarm is one warm Solve of the two-unknown syrup model
// from a start near its solution, as a sweep's corrector does it: the
// solver's own overhead, not the model's evaluations, dominates.
func BenchmarkSolverSmallWarm(b *testing.B) {
	warmBench(b, filepath.Join("..", "testdata", "models", "syrup.yaml"), false)
}

// BenchmarkSolverSmallWarmInto is BenchmarkSolverSmallWarm with SolveInto
// and one Result for all the solves: no allocation.
func BenchmarkSolverSmallWarmInto(b *testing.B) {
	warmBench(b, filepath.Join("..", "testdata", "models", "syrup.yaml"), true)
}

// BenchmarkSolverColumnWarm is the warm Solve of BenchmarkSolverSmallWarm on
// the 41-stage column template (library/templates/column.yaml, 82
// unknowns): a bigger system, where the evaluations and the factorisation
// dominate.
func BenchmarkSolverColumnWarm(b *testing.B) {
	warmBench(b, filepath.Join("..", "library", "templates", "column.yaml"), false)
}

// warmBench solves the model of file from its guesses, then times warm
// solves as a sweep's corrector makes them (kept pivots, no blocks, no
// homotopy, at most 8 iterations) from its solution moved by 1e-4 of each
// value, by Solve or, with into, by SolveInto.
func warmBench(b *testing.B, file string, into bool) {
	f, err := model.LoadFile(file)
	if err != nil {
		b.Fatal(err)
	}
	sys, err := f.Expand(nil)
	if err != nil {
		b.Fatal(err)
	}
	prog, err := jacobian.Compile(sys)
	if err != nil {
		b.Fatal(err)
	}
	x, p := make([]float64, len(sys.Unknowns)), make([]float64, len(sys.Params))
	var lower, upper []float64
	for j, s := range sys.Unknowns {
		x[j] = s.Value
		lower, upper = append(lower, s.Min), append(upper, s.Max)
	}
	for k, s := range sys.Params {
		p[k] = s.Value
	}
	e := prog.NewEval()
	pat := prog.Pattern()
	n := len(x)
	prob := &Problem{N: n, RowPtr: pat.RowPtr, ColIdx: pat.ColIdx,
		Residual: func(f, x []float64) error { return e.Residual(f, x, p) },
		ResidualJacobian: func(f, jval, x []float64) error {
			return e.ResidualJacobian(f, &jacobian.Sparse{Rows: n, Cols: n, RowPtr: pat.RowPtr, ColIdx: pat.ColIdx, Val: jval}, x, p)
		},
		Lower: lower, Upper: upper}
	sol := NewSolver(prob)
	sol.KeepPivots = true
	res, err := sol.Solve(context.Background(), x, nil)
	if err != nil {
		b.Fatal(err)
	}
	x0 := make([]float64, n)
	for j, v := range res.X {
		x0[j] = v * (1 + 1e-4*float64(1-2*(j%2)))
	}
	opts := &Options{NoBlocks: true, NoHomotopy: true, MaxIter: 8}
	var dst Result
	b.ReportAllocs()
	for b.Loop() {
		if into {
			err = sol.SolveInto(context.Background(), &dst, x0, opts)
		} else {
			_, err = sol.Solve(context.Background(), x0, opts)
		}
		if err != nil {
			b.Fatal(err)
		}
	}
}
