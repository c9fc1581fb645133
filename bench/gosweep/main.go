// Command gosweep runs the SciPy peer's sweeps (column A 20 x 20, the syrup
// blender 100 x 100) through loopwright's sweep engine on one worker and
// prints the peer's JSON lines: a "sweep" line with points/s and ranges,
// and with -points one "sweep_point" line per point. bench/compare.sh runs
// it beside /work/shared/bench/peer_scipy.py.
package main

import (
	"context"
	"encoding/json"
	"flag"
	"fmt"
	"math"
	"os"
	"time"

	"github.com/loopwright/loopwright/interact/sweep"
	"github.com/loopwright/loopwright/jacobian"
	"github.com/loopwright/loopwright/model"
	"github.com/loopwright/loopwright/solve"
)

func main() {
	which := flag.String("model", "column", "column or blender")
	root := flag.String("root", ".", "the repository root")
	points := flag.Bool("points", false, "print every point")
	flag.Parse()
	if err := run(*which, *root, *points); err != nil {
		fmt.Fprintln(os.Stderr, "gosweep:", err)
		os.Exit(1)
	}
}

func run(which, root string, points bool) error {
	var (
		path string
		set  map[string]string
		axes []struct {
			name     string
			from, to float64 // SI
			n        int
		}
	)
	switch which {
	case "column":
		path, set = root+"/library/templates/column.yaml", map[string]string{"L": "2.706", "V": "3.206"}
		axes = append(axes, struct {
			name     string
			from, to float64
			n        int
		}{"zF", 0.45, 0.55, 20}, struct {
			name     string
			from, to float64
			n        int
		}{"F", 0.9 * 1000 / 60, 1.1 * 1000 / 60, 20})
	case "blender":
		path = root + "/testdata/models/syrup.yaml"
		axes = append(axes, struct {
			name     string
			from, to float64
			n        int
		}{"s_conc", 0.60, 0.68, 100}, struct {
			name     string
			from, to float64
			n        int
		}{"f_conc", 600.0 / 3600, 1000.0 / 3600, 100})
	default:
		return fmt.Errorf("unknown model %q", which)
	}
	f, err := model.LoadFile(path)
	if err != nil {
		return err
	}
	sys, err := f.Expand(nil)
	if err != nil {
		return err
	}
	for k, v := range set {
		if err := sys.SetValue(k, v); err != nil {
			return err
		}
	}
	prog, err := jacobian.Compile(sys)
	if err != nil {
		return err
	}
	var sa []sweep.Axis
	for _, a := range axes {
		_, k, ok := sys.Lookup(a.name)
		if !ok {
			return fmt.Errorf("no %s", a.name)
		}
		sa = append(sa, sweep.AxisFor(sys, k, a.from, a.to, a.n, false))
	}
	ctx := context.Background()
	t0 := time.Now()
	prob, err := sweep.FromModel(ctx, sys, prog, &sweep.ModelOptions{Axes: sa, Solver: solverOpts()})
	if err != nil {
		return err
	}
	// Keep what the peer keeps for each point (axis values, outputs, K,
	// RGA, NI of the diagonal pairing), as plain numbers: a record's slices
	// would leave the garbage collector a growing heap of pointers to scan.
	h := prob.Header
	// The peer's NI is of the diagonal pairing; find it among the pairings.
	diag := -1
	for k, p := range h.Pairings {
		if p.Input[0] == 0 && p.Input[1] == 1 {
			diag = k
		}
	}
	no, ni, na := len(h.Outputs), len(h.Inputs), len(h.Axes)
	width := na + no + 2*no*ni + 1
	kept := make([]float64, 0, prob.Plan.Len()*width)
	var idx []int
	var bad error
	err = sweep.Run(ctx, prob, &sweep.Options{Workers: 1}, func(r *sweep.Record) error {
		if !r.Converged || r.RGA == nil {
			if bad == nil {
				bad = fmt.Errorf("point %d: %s", r.Index, r.Reason)
			}
			return nil
		}
		idx = append(idx, r.Index)
		kept = append(kept, r.Values...)
		kept = append(kept, r.Outputs...)
		kept = append(kept, r.K...)
		kept = append(kept, r.RGA...)
		kept = append(kept, r.NI[diag])
		return nil
	})
	elapsed := time.Since(t0).Seconds()
	if err == nil {
		err = bad
	}
	if err != nil {
		return err
	}
	point := func(k int) (vals, ys, kk, rg []float64, nidx float64) {
		v := kept[k*width : (k+1)*width]
		return v[:na], v[na : na+no], v[na+no : na+no+no*ni], v[na+no+no*ni : na+no+2*no*ni], v[width-1]
	}
	lo := func() [2]float64 { return [2]float64{math.Inf(1), math.Inf(-1)} }
	rga, nir := lo(), lo()
	ys := make([][2]float64, no)
	for i := range ys {
		ys[i] = lo()
	}
	upd := func(r *[2]float64, v float64) { r[0], r[1] = math.Min(r[0], v), math.Max(r[1], v) }
	for k := range idx {
		_, y, _, rg, n := point(k)
		upd(&rga, rg[0])
		upd(&nir, n)
		for i := range ys {
			upd(&ys[i], y[i])
		}
	}
	rng := map[string]any{"rga11": rga, "niederlinski": nir}
	for i, o := range h.Outputs {
		rng[o.Name] = ys[i]
	}
	enc := json.NewEncoder(os.Stdout)
	enc.Encode(map[string]any{"model": which, "mode": "sweep", "points": len(idx), "range": rng,
		"elapsed_s": elapsed, "points_per_s": float64(len(idx)) / elapsed})
	if points {
		for k, i := range idx {
			vals, _, kk, rg, n := point(k)
			enc.Encode(map[string]any{"model": which, "mode": "sweep_point", "i": i,
				h.Axes[0].Name: vals[0], h.Axes[1].Name: vals[1], "K": kk, "rga": rg, "niederlinski": n})
		}
	}
	return nil
}

func solverOpts() *solve.Options {
	if os.Getenv("GOSWEEP_NOBLOCKS") != "" {
		return &solve.Options{NoBlocks: true}
	}
	return nil
}
