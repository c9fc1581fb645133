package sweep

import (
	"context"
	"testing"

	"github.com/loopwright/loopwright/jacobian"
	"github.com/loopwright/loopwright/model"
)

var sinkRecords int

// BenchmarkSweepColumn20x20 is the SciPy peer's "column sweep": column A
// (L 2.706, V 3.206 kmol/min), zF 0.45..0.55 x F 0.9..1.1 kmol/min, 20 x 20,
// solving, gains, RGA and Niederlinski index (and the full pairing screen)
// at every point, on one worker. Reports points/s.
func BenchmarkSweepColumn20x20(b *testing.B) {
	sys, prog := columnA(b)
	sweepBench(b, sys, prog, columnAxes(b, sys, 20, 20))
}

// BenchmarkSweepSyrup100x100 is the peer's "blender sweep": the syrup
// example, s_conc 0.60..0.68 x f_conc 600..1000 kg/h, 100 x 100.
func BenchmarkSweepSyrup100x100(b *testing.B) {
	sys, prog, axes := syrupSweep(b)
	sweepBench(b, sys, prog, axes)
}

// syrupSweep is the syrup example with the axes of the peer's blender
// sweep.
func syrupSweep(b *testing.B) (*model.System, *jacobian.Program, []Axis) {
	sys, prog := syrupModel(b)
	_, ks, _ := sys.Lookup("s_conc")
	_, kf, _ := sys.Lookup("f_conc")
	return sys, prog, []Axis{AxisFor(sys, ks, 0.60, 0.68, 100, false), AxisFor(sys, kf, 600.0/3600, 1000.0/3600, 100, false)}
}

func sweepBench(b *testing.B, sys *model.System, prog *jacobian.Program, axes []Axis) {
	ctx := context.Background()
	n := 0
	for b.Loop() {
		prob, err := FromModel(ctx, sys, prog, &ModelOptions{Axes: axes})
		if err != nil {
			b.Fatal(err)
		}
		if err := Run(ctx, prob, &Options{Workers: 1}, func(r *Record) error {
			if !r.Converged {
				b.Fatalf("point %d: %s", r.Index, r.Reason)
			}
			n++
			return nil
		}); err != nil {
			b.Fatal(err)
		}
	}
	sinkRecords = n
	b.ReportMetric(float64(n)/b.Elapsed().Seconds(), "points/s")
}

// BenchmarkFromModelSyrup100x100 is the set-up of the syrup sweep alone:
// the nominal solve and analysis, the plan, and the chain heads.
func BenchmarkFromModelSyrup100x100(b *testing.B) {
	sys, prog, axes := syrupSweep(b)
	ctx := context.Background()
	for b.Loop() {
		if _, err := FromModel(ctx, sys, prog, &ModelOptions{Axes: axes}); err != nil {
			b.Fatal(err)
		}
	}
}

// syrupModel is the syrup example (testdata/models/syrup.yaml), compiled.
func syrupModel(t testing.TB) (*model.System, *jacobian.Program) {
	f, err := model.LoadFile("../../testdata/models/syrup.yaml")
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
