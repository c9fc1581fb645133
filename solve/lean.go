package solve

import (
	"context"
	"errors"
	"fmt"
	"math"

	"github.com/loopwright/loopwright/solve/sparse"
)

// The lean run. A warm solve of a small system (a sweep's corrector: two
// unknowns, one or two Newton iterations from a predicted start) spends
// most of its time in the solver's bookkeeping rather than in the model's
// evaluations. runAll is run for the common case of the whole system as
// given (the part's rows and columns are 0..N-1 in order) outside the
// homotopy and without a Recorder, written so that it does less of that
// bookkeeping:
//
//   - the rows and columns are indexed directly, not through the part;
//   - the merit of an accepted first trial of the line search, which run
//     measures again at the next iteration on the same values, is kept;
//   - the line search does not copy x into its trial point, all of which it
//     sets.
//
// It makes the same evaluations in the same order, takes the same steps and
// the same decisions as run, and ends with the same outcome, to the bit
// (TestLeanRunMatchesRun compares them, evaluation by evaluation). It leaves
// the outcome in s.out rather than returning it: the Go compiler copies a
// returned outcome through the stack on the way to the caller, which costs
// more than the rest of a converged run's ending.

// lean reports whether runAll may stand in for run on pt.
func (s *solver) lean(pt *part) bool {
	return pt.ident && !s.hom && s.opt.Recorder == nil && !s.general
}

// runAll is run on a part with pt.ident, outside the homotopy, without a
// Recorder (see lean). It leaves the outcome in s.out and reports whether
// it converged (returning an outcome costs copies of it on the way).
func (s *solver) runAll(ctx context.Context, pt *part, x []float64, ftol float64) bool {
	n := s.n
	x = x[:n]
	// F at x is read where the evaluations leave it, in the cache (s.cf),
	// not copied to s.f: while the run needs it (the norms, the Newton
	// step), the last evaluation was at x; it converges with the cache at
	// x, where finish reads it.
	f, lo, hi, typ := s.cf[:n], s.lo[:n], s.hi[:n], s.typ[:n]
	small := 0
	var norm, phi float64
	measured := false // norm and phi are those of F at x already
	// A context whose Done is nil can never be cancelled (its Err stays
	// nil), and one whose Done is not closed is not cancelled yet: run
	// asks ctx.Err() at every iteration, this run asks the channel, which
	// costs no call through the interface for a context that cannot be
	// cancelled (context.Background, say).
	done := ctx.Done()
	for it := 0; ; it++ {
		if done != nil {
			select {
			case <-done:
				err := ctx.Err()
				return s.stop(outcome{status: Canceled, reason: err.Error(), bad: -1, err: err})
			default:
			}
		}
		// When measured, the line search's first trial was evaluated with
		// the Jacobian: x is that point to the bit, so F and J are in the
		// cache. Else evalAt evaluates them (or finds them there). Outside
		// the homotopy (lean) F is not shifted.
		if !measured {
			if err := s.evalAt(x); err != nil {
				return s.stop(outcome{status: EvalFailed, bad: -1, err: err, reason: "cannot evaluate the residual: " + err.Error()})
			}
			norm, phi = s.measureAll(f)
		}
		measured = false
		if norm <= ftol || (small > 0 && norm <= math.Sqrt(ftol)) {
			s.conv, s.convNorm = true, norm
			s.out.status, s.out.bad, s.out.reason, s.out.err = Converged, -1, "", nil
			return true
		}
		if math.IsInf(norm, 0) {
			return s.stop(outcome{status: EvalFailed, bad: -1, reason: "the residual is not finite"})
		}
		if small >= 3 {
			return s.stop(outcome{status: LineSearchFailed, bad: -1,
				reason: fmt.Sprintf("steps too small to make progress (scaled residual %.3g)", norm)})
		}
		if it >= s.opt.MaxIter {
			return s.stop(outcome{status: IterationLimit, bad: -1,
				reason: fmt.Sprintf("no convergence in %d iterations (scaled residual %.3g)", s.opt.MaxIter, norm)})
		}

		// Newton direction: J d = -F.
		var err error
		if pt.lu == nil {
			a := pt.a
			a.Val = s.jval
			pt.lu, err = sparse.Factorize(&a, nil)
		} else {
			err = pt.lu.RefactorValues(s.jval)
		}
		if err != nil {
			pt.lu = nil
			var se *sparse.SingularError
			bad := -1
			if errors.As(err, &se) {
				bad = se.Col
			}
			return s.stop(outcome{status: SingularJacobian, bad: bad, err: err,
				reason: "singular Jacobian at unknown " + s.varName(bad)})
		}
		d := s.d[:n]
		for i, v := range f {
			d[i] = -v
		}
		pt.lu.SolveWith(s.w[:n], d, d)

		// Bounds, as run takes them. run divides room by the step for
		// every bounded component; here only where the step is longer
		// than the room: elsewhere the quotient is at least 1 (or NaN), so
		// not below amax, which never exceeds 1.
		dc := s.dc[:n]
		clipped := false
		amax, blocking, up := 1.0, -1, false
		for c, dl := range d {
			dc[c] = dl
			if dl < 0 && lo[c] > math.Inf(-1) {
				if room := 0.995 * (x[c] - lo[c]); -dl > room {
					dc[c], clipped = -room, true
					if lim := room / -dl; lim < amax {
						amax, blocking, up = lim, c, false
					}
				}
			} else if dl > 0 && hi[c] < math.Inf(1) {
				if room := 0.995 * (hi[c] - x[c]); dl > room {
					dc[c], clipped = room, true
					if lim := room / dl; lim < amax {
						amax, blocking, up = lim, c, true
					}
				}
			}
		}
		alpha, ok := 0.0, false
		var nrmT, phiT float64 // at the accepted point
		if clipped {
			alpha, ok, nrmT, phiT, measured = s.lineSearchAll(x, dc, 1, phi)
		}
		if !ok && blocking >= 0 && amax < 1 {
			b := lo[blocking]
			if up {
				b = hi[blocking]
			}
			if math.Abs(x[blocking]-b) <= 1e-6*typ[blocking] {
				amax = 0
			}
		}
		if !ok {
			if !(amax > 1e-12) {
				return s.stop(s.hitBound(blocking, up))
			}
			alpha, ok, nrmT, phiT, measured = s.lineSearchAll(x, d, amax, phi)
			dc = d
		}
		if !ok {
			return s.stop(outcome{status: LineSearchFailed, bad: -1,
				reason: fmt.Sprintf("line search failed: no step along the Newton direction reduces the residual (scaled residual %.3g)", norm)})
		}
		norm, phi = nrmT, phiT // used only when measured
		d = dc
		step := 0.0
		xtry := s.xtry[:n]
		for c, dl := range d {
			// max(step, v) as the built-in gives it, NaN included.
			if v := math.Abs(alpha*dl) / typ[c]; v > step || v != v {
				step = v
			}
			x[c] = xtry[c]
		}
		s.iters++
		s.lastStep = step
		if step <= s.opt.XTol {
			small++
		} else {
			small = 0
		}
	}
}

// lineSearchAll is lineSearch on a part with pt.ident. On success it also
// returns the scaled max norm and the merit at the accepted point, and
// whether that point was the first trial, evaluated with the Jacobian (F
// and J there are then in the cache).
func (s *solver) lineSearchAll(x, dir []float64, amax, phi float64) (alpha float64, ok bool, norm, phiT float64, cached bool) {
	n := s.n
	xtry, dir := s.xtry[:n], dir[:n]
	alpha = amax
	for first := true; alpha >= 1e-10; first = false {
		for c, xc := range x {
			xtry[c] = xc + alpha*dir[c]
		}
		phiT, nrm := math.Inf(1), 0.0
		// The first trial is evaluated with the Jacobian, into the cache
		// (s.cf), where it is measured: not copied to s.ftry as run does
		// (lean is outside the homotopy: no shift).
		err := errNotEvaluated
		if first {
			err = s.evalAt(xtry)
		}
		withJ := err == nil
		if withJ {
			nrm, phiT = s.measureAll(s.cf[:n])
		} else if err = s.residual(s.ftry, xtry); err == nil {
			nrm, phiT = s.measureAll(s.ftry)
		}
		if phiT <= (1-2e-4*alpha)*phi {
			return alpha, true, nrm, phiT, withJ
		}
		next := 0.25 * alpha
		if !math.IsInf(phiT, 0) {
			g := -2 * phi
			if c := (phiT - phi - g*alpha) / (alpha * alpha); c > 0 {
				next = -g / (2 * c)
			}
			next = min(max(next, 0.1*alpha), 0.5*alpha)
		}
		alpha = next
	}
	return 0, false, 0, 0, false
}

// stop sets s.out to out and returns false: runAll's end without
// convergence.
func (s *solver) stop(out outcome) bool {
	s.out = out
	return false
}

// hitBound is the outcome of a step that a bound the iterate sits on
// stops: unknown blocking, at its upper bound when up.
func (s *solver) hitBound(blocking int, up bool) outcome {
	side, b := "lower", s.lo[blocking]
	if up {
		side, b = "upper", s.hi[blocking]
	}
	return outcome{status: HitBound, bad: blocking,
		reason: fmt.Sprintf("hit bound: unknown %s sits on its %s bound %s and the Newton step points beyond it", s.varName(blocking), side, s.value(blocking, b))}
}
