package sweep

import (
	"context"
	"fmt"
	"math"
	"runtime"
	"slices"
	"sync"
)

// Worker solves and analyses one operating point. Run gives each goroutine
// its own Worker, so a Worker may keep scratch space.
type Worker interface {
	// Point solves the steady state at parameters p, starting from the
	// converged state from (a neighbour's, or the nominal one), and fills
	// rec's Iterations and analysis fields (Outputs, K, RGA, Det, Cond,
	// Best, NI, Pass) in display units. It returns the converged state,
	// which Run hands to the next points of the chain.
	//
	// A point that does not converge returns a State with a nil X and an
	// error saying why. A point that converges but cannot be analysed
	// returns the state and an error. Point must not keep p, from or rec;
	// Run keeps the slices of the returned State, so Point must not reuse
	// them.
	Point(ctx context.Context, p []float64, from State, rec *Record) (State, error)
}

// State is a converged point handed down a continuation chain to the
// points solved from it.
type State struct {
	X []float64 // the unknowns
	// Tangent is the worker's own data for predicting nearby points (the
	// sensitivities of X to the axes, say); nil when it has none.
	Tangent []float64
	// ChainStart marks a state a chain begins from (the nominal state, or a
	// chain's head solved beforehand). Starting from it, a worker forgets
	// whatever it kept from the points it solved before (pivot orders,
	// say), so that a chain's records do not depend on which chains the
	// same worker solved earlier.
	ChainStart bool
}

// Head is a chain's first point solved before the run: its record, and
// the state the chain continues from (nil X when it did not converge).
type Head struct {
	Record *Record
	State  State
}

// Problem is a sweep ready to run.
type Problem struct {
	Header *Header
	Plan   *Plan
	// Nominal is the parameter vector at the nominal point; each point
	// overrides the axes' slots.
	Nominal []float64
	// Start is the converged state at the nominal point: every chain's first
	// point not solved beforehand (see Heads) starts from it, and so does a
	// retry after a failed continuation.
	Start []float64
	// StartTangent is the worker's tangent data at Start (State.Tangent);
	// may be nil.
	StartTangent []float64
	// Heads, when not nil, holds for each chain its first point solved
	// beforehand (nil entries are solved by Run): Run emits its record as
	// it is and continues the chain from its state.
	Heads []*Head
	// NewWorker returns a Worker for one goroutine.
	NewWorker func() Worker
}

// Options are how to run a sweep. A nil *Options means the defaults.
type Options struct {
	// Workers is the number of goroutines; 0 means GOMAXPROCS. The records
	// do not depend on it.
	Workers int
	// Shard restricts the run to a share of the chains. The zero value runs
	// everything.
	Shard Shard
	// Done marks points already on disk (resuming): they are not emitted
	// again. Chains with some points done are solved again from their start,
	// so the new points equal an uninterrupted run's.
	Done map[int]bool
	// Progress, if set, is called from Run's goroutine after each emitted
	// record with the number emitted so far and the number to emit.
	Progress func(done, total int)
}

// Run solves the plan's points of the shard and calls emit for each record
// in increasing point order, from the calling goroutine. A failed point is
// emitted with its reason, never dropped.
//
// emit must not keep r after it returns: Run reuses the Record for a later
// point. The slices in it are never reused and may be kept; copying the
// struct (*r) keeps the whole record.
//
// When ctx is cancelled, Run stops starting points, emits every finished
// point (the in-order ones first, then any that finished out of order, in
// increasing order) and returns an error wrapping ctx.Err(). An error from
// emit stops the run and is returned.
func Run(ctx context.Context, prob *Problem, opts *Options, emit func(*Record) error) error {
	if opts == nil {
		opts = &Options{}
	}
	if err := opts.Shard.Check(); err != nil {
		return err
	}
	plan := prob.Plan
	if len(prob.Start) == 0 && prob.NewWorker == nil {
		panic("sweep: Problem without a start state or worker")
	}
	todo := plan.PointsOf(opts.Shard) // points to emit, in order
	if len(opts.Done) > 0 {
		todo = slices.DeleteFunc(todo, func(i int) bool { return opts.Done[i] })
	}
	var chains []int
	for _, c := range plan.ChainsOf(opts.Shard) {
		for _, s := range plan.Chains[c] {
			if !opts.Done[s.Point] {
				chains = append(chains, c)
				break
			}
		}
	}
	workers := opts.Workers
	if workers <= 0 {
		workers = runtime.GOMAXPROCS(0)
	}
	workers = min(workers, max(len(chains), 1))

	ctx, cancel := context.WithCancel(ctx)
	defer cancel()
	pending := map[int]*Record{}
	next, emitted := 0, 0
	var emitErr error
	var pool sync.Pool // of the Records emitted, for the next points
	var free []*Record // the same with one worker, which needs no locking
	put := func(r *Record) {
		if emitErr != nil {
			return
		}
		if emitErr = emit(r); emitErr != nil {
			cancel()
			return
		}
		if workers == 1 {
			free = append(free, r)
		} else {
			pool.Put(r)
		}
		emitted++
		if opts.Progress != nil {
			opts.Progress(emitted, len(todo))
		}
	}
	collect := func(r *Record) {
		if next < len(todo) && r.Index == todo[next] && len(pending) == 0 {
			// In order (one worker, or the chain the collector waits on).
			put(r)
			next++
			return
		}
		pending[r.Index] = r
		for next < len(todo) && pending[todo[next]] != nil {
			put(pending[todo[next]])
			delete(pending, todo[next])
			next++
		}
	}
	if workers == 1 {
		// One worker: solve the chains here, with no goroutines to hand the
		// records over.
		wk := prob.NewWorker()
		recs := &recordMaker{prob: prob, free: &free}
		var states []State
		for _, c := range chains {
			var ok bool
			if states, ok = solveChain(ctx, prob, wk, recs, c, opts.Done, states, collect); !ok {
				break
			}
		}
	} else {
		jobs := make(chan int)
		// Room for a run of records, so that workers sharing a core hand
		// them over in runs rather than one switch of goroutines per record.
		results := make(chan *Record, 64*workers)
		var wg sync.WaitGroup
		for w := 0; w < workers; w++ {
			wg.Add(1)
			go func() {
				defer wg.Done()
				wk := prob.NewWorker()
				recs := &recordMaker{prob: prob, pool: &pool}
				var states []State
				for c := range jobs {
					var ok bool
					if states, ok = solveChain(ctx, prob, wk, recs, c, opts.Done, states, func(r *Record) { results <- r }); !ok {
						return
					}
				}
			}()
		}
		go func() {
			defer close(jobs)
			for _, c := range chains {
				select {
				case jobs <- c:
				case <-ctx.Done():
					return
				}
			}
		}()
		go func() { wg.Wait(); close(results) }()
		for r := range results {
			collect(r)
		}
	}
	// Cancelled or failed: keep whatever finished beyond a gap, in order.
	for ; next < len(todo); next++ {
		if r := pending[todo[next]]; r != nil {
			put(r)
		}
	}
	if emitErr != nil {
		return emitErr
	}
	if emitted < len(todo) {
		if err := ctx.Err(); err != nil {
			return fmt.Errorf("sweep stopped after %d of %d points: %w", emitted, len(todo), err)
		}
		return fmt.Errorf("sweep: %d of %d points missing", len(todo)-emitted, len(todo))
	}
	return nil
}

// solveChain solves chain c in order and sends the records of points not
// yet done to send. It returns false when the context was cancelled. states is
// scratch space for the chain's converged states, returned for the next
// chain.
func solveChain(ctx context.Context, prob *Problem, wk Worker, recs *recordMaker, c int, done map[int]bool, states []State, send func(*Record)) ([]State, bool) {
	chain := prob.Plan.Chains[c]
	p := append([]float64(nil), prob.Nominal...)
	start := State{X: prob.Start, Tangent: prob.StartTangent, ChainStart: true}
	// states[k] is the converged state of chain[k] (nil X when it did not
	// converge).
	states = append(states[:0], make([]State, len(chain))...)
	defer clear(states) // let the chain's states go
	head := prob.head(c)
	for k, s := range chain {
		if ctx.Err() != nil {
			return states, false
		}
		if k%yieldEvery == 0 {
			runtime.Gosched()
		}
		var rec *Record
		if head != nil && s.Parent < 0 && head.Record.Index == s.Point {
			rec = head.Record.clone()
			states[k] = head.State
		} else {
			from := start
			ok := false
			if j := parentStep(chain, k); j >= 0 && states[j].X != nil {
				from, ok = states[j], true
			}
			vals := prob.Plan.Point(s.Point)
			for a := range prob.Plan.Axes {
				p[prob.Plan.Axes[a].Param] = vals[a]
			}
			rec, states[k] = solvePoint(ctx, prob, wk, recs, p, s.Point, from, !ok)
			if ctx.Err() != nil {
				return states, false // the point may be half done: leave it to a resume
			}
		}
		if done[s.Point] {
			continue
		}
		send(rec) // the collector drains until every worker is done
	}
	return states, true
}

// yieldEvery is how many points a worker solves between yields of its
// processor. A worker that never blocks (one worker hands its records over
// without switching goroutines) would otherwise leave the garbage
// collector's background marking no time to run: marking then advances
// only through allocation assists and drags on, and while it does every
// pointer store pays a write barrier (measured on the 100 x 100 syrup
// sweep on one core: mark phases of 1-8 ms instead of about 1 ms, and the
// sweep 1.1-1.2x slower).
const yieldEvery = 64

// parentStep returns the position in chain of the parent of chain[k], or
// -1 when it has none. The parent comes earlier in the chain, most often
// just before.
func parentStep(chain []Step, k int) int {
	parent := chain[k].Parent
	if parent < 0 {
		return -1
	}
	for j := k - 1; j >= 0; j-- {
		if chain[j].Point == parent {
			return j
		}
	}
	return -1
}

// solvePoint solves point i at parameters p from the state from (the
// nominal start when fromStart) and returns its record, normalized, and
// the converged state (nil X when it did not converge). A continuation that
// fails is tried once more from the nominal state.
func solvePoint(ctx context.Context, prob *Problem, wk Worker, recs *recordMaker, p []float64, i int, from State, fromStart bool) (*Record, State) {
	rec := recs.record(i)
	st, err := wk.Point(ctx, p, from, rec)
	if st.X == nil && err != nil && !fromStart && ctx.Err() == nil {
		rec = recs.record(i)
		st, err = wk.Point(ctx, p, State{X: prob.Start, Tangent: prob.StartTangent, ChainStart: true}, rec)
	}
	rec.Converged = st.X != nil
	if err != nil {
		rec.Reason = err.Error()
	} else if st.X == nil {
		rec.Reason = "no solution"
	}
	st.ChainStart = false
	rec.normalize()
	return rec, st
}

func (prob *Problem) head(c int) *Head {
	if c < len(prob.Heads) {
		return prob.Heads[c]
	}
	return nil
}

// recordMaker makes the records of one worker's points. The Record structs
// come from pool or free, where Run puts them back once emitted (both nil:
// a new one each time); their Values and Pass are cut from blocks shared by
// many records and never reused, so that emitted slices stay valid.
type recordMaker struct {
	prob *Problem
	pool *sync.Pool
	free *[]*Record // Run's, when Run and the worker share a goroutine
	vals []float64
	pass []bool
}

// recordBlock is the number of records whose Values or Pass one block
// holds.
const recordBlock = 64

// record returns a record of point i with the axis values in display
// units, no results (Det and Cond NaN), and room for the pass flags of
// the header's pairings.
func (m *recordMaker) record(i int) *Record {
	var r *Record
	if m.free != nil && len(*m.free) > 0 {
		f := *m.free
		r, *m.free = f[len(f)-1], f[:len(f)-1]
	} else if m.pool != nil {
		r, _ = m.pool.Get().(*Record)
	}
	if r == nil {
		r = new(Record)
	}
	prob := m.prob
	na := len(prob.Plan.Axes)
	if len(m.vals) < na {
		m.vals = make([]float64, recordBlock*na)
	}
	np := 0
	if prob.Header != nil {
		np = len(prob.Header.Pairings)
	}
	if len(m.pass) < np {
		m.pass = make([]bool, recordBlock*np)
	}
	*r = Record{Index: i, Det: math.NaN(), Cond: math.NaN(),
		Values: m.vals[:na:na], Pass: m.pass[:0:np]}
	m.vals, m.pass = m.vals[na:], m.pass[np:]
	for a := range prob.Plan.Axes {
		r.Values[a] = prob.Plan.Axes[a].Display(prob.Plan.Point(i)[a])
	}
	return r
}
