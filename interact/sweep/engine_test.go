package sweep

import (
	"bytes"
	"context"
	"errors"
	"math"
	"reflect"
	"strings"
	"sync/atomic"
	"testing"
)

// runAll runs prob and returns the encoded bytes of its records (format f).
func runAll(t *testing.T, prob *Problem, opts *Options, f Format) ([]byte, []Record) {
	t.Helper()
	var buf bytes.Buffer
	enc := NewEncoder(&buf, f, prob.Header)
	if err := enc.WriteHeader(); err != nil {
		t.Fatal(err)
	}
	var recs []Record
	err := Run(context.Background(), prob, opts, func(r *Record) error {
		recs = append(recs, *r)
		return enc.WriteRecord(r)
	})
	if err != nil {
		t.Fatal(err)
	}
	return buf.Bytes(), recs
}

func TestRunSameBytesWhateverWorkers(t *testing.T) {
	for _, d := range []Design{{}, {Kind: LHS, Points: 150, Seed: 7}, {Kind: Random, Points: 90, Seed: 3}} {
		var want []byte
		for _, j := range []int{1, 2, 5} {
			got, recs := runAll(t, fakeProblem(d, 9, 7), &Options{Workers: j}, JSONL)
			for k, r := range recs {
				if r.Index != k {
					t.Fatalf("%s -j %d: record %d has index %d: not in point order", d, j, k, r.Index)
				}
			}
			if want == nil {
				want = got
				continue
			}
			if !bytes.Equal(got, want) {
				t.Errorf("%s: -j %d output differs from -j 1", d, j)
			}
		}
	}
}

func TestRunRecordsFailuresWithReason(t *testing.T) {
	prob := fakeProblem(Design{}, 5, 4)
	prob.NewWorker = func() Worker {
		return &fakeWorker{fail: func(p []float64) bool { return p[0] > 1.5 }}
	}
	_, recs := runAll(t, prob, nil, CSV)
	if len(recs) != 20 {
		t.Fatalf("got %d records, want all 20: failed points must not be dropped", len(recs))
	}
	failed := 0
	for _, r := range recs {
		if !r.Converged {
			failed++
			if !strings.Contains(r.Reason, "no convergence") || r.K != nil {
				t.Errorf("failed point %d: reason %q, K %v", r.Index, r.Reason, r.K)
			}
		}
	}
	if failed != 4 { // a = 1.6 is the last row, 4 points
		t.Errorf("%d failed points, want 4", failed)
	}
}

// A cancelled run keeps every finished point; resuming with those marked
// done gives exactly the records of an uninterrupted run.
func TestRunCancelThenResume(t *testing.T) {
	for _, d := range []Design{{}, {Kind: LHS, Points: 100, Seed: 1}} {
		want, _ := runAll(t, fakeProblem(d, 8, 6), &Options{Workers: 1}, JSONL)

		prob := fakeProblem(d, 8, 6)
		ctx, cancel := context.WithCancel(context.Background())
		var calls atomic.Int64
		prob.NewWorker = func() Worker { return &cancelAfter{n: &calls, at: 17, cancel: cancel} }
		var first []Record
		err := Run(ctx, prob, &Options{Workers: 2}, func(r *Record) error { first = append(first, *r); return nil })
		if !errors.Is(err, context.Canceled) {
			t.Fatalf("%s: err = %v, want context.Canceled", d, err)
		}
		if len(first) == 0 || len(first) >= prob.Plan.Len() {
			t.Fatalf("%s: %d points before the stop, want some but not all", d, len(first))
		}
		done := map[int]bool{}
		for _, r := range first {
			done[r.Index] = true
		}
		prob = fakeProblem(d, 8, 6)
		var rest []Record
		if err := Run(context.Background(), prob, &Options{Workers: 3, Done: done}, func(r *Record) error { rest = append(rest, *r); return nil }); err != nil {
			t.Fatal(err)
		}
		all := append(first, rest...)
		sortRecords(all)
		var buf bytes.Buffer
		enc := NewEncoder(&buf, JSONL, prob.Header)
		enc.WriteHeader()
		for i := range all {
			enc.WriteRecord(&all[i])
		}
		if !bytes.Equal(buf.Bytes(), want) {
			t.Errorf("%s: interrupted + resumed records differ from an uninterrupted run", d)
		}
	}
}

type cancelAfter struct {
	fakeWorker
	n      *atomic.Int64
	at     int64
	cancel func()
}

func (w *cancelAfter) Point(ctx context.Context, p []float64, x0 State, rec *Record) (State, error) {
	if w.n.Add(1) == w.at {
		w.cancel()
	}
	return w.fakeWorker.Point(ctx, p, x0, rec)
}

func TestShardsCoverTheSweepOnce(t *testing.T) {
	for _, d := range []Design{{}, {Kind: Random, Points: 130, Seed: 9}} {
		_, whole := runAll(t, fakeProblem(d, 7, 5), nil, JSONL)
		var parts []Record
		for k := 0; k < 3; k++ {
			_, recs := runAll(t, fakeProblem(d, 7, 5), &Options{Shard: Shard{K: k, N: 3}}, JSONL)
			parts = append(parts, recs...)
		}
		sortRecords(parts)
		if !recordsEqual(parts, whole) {
			t.Errorf("%s: three shards together differ from the whole run", d)
		}
		h := fakeProblem(d, 7, 5).Header
		s1, err := Summarize(h, whole)
		if err != nil {
			t.Fatal(err)
		}
		s2, err := Summarize(h, parts)
		if err != nil {
			t.Fatal(err)
		}
		if !reflect.DeepEqual(jsonOf(t, s1), jsonOf(t, s2)) {
			t.Errorf("%s: summary of shards differs", d)
		}
	}
}

func recordsEqual(a, b []Record) bool {
	if len(a) != len(b) {
		return false
	}
	h := fakeProblem(Design{}, 2, 2).Header
	for i := range a {
		if !bytes.Equal(appendJSON(nil, h, &a[i]), appendJSON(nil, h, &b[i])) {
			return false
		}
	}
	return true
}

func TestRunStopsOnEmitError(t *testing.T) {
	prob := fakeProblem(Design{}, 6, 6)
	disk := errors.New("no space left on device")
	n := 0
	err := Run(context.Background(), prob, &Options{Workers: 2}, func(r *Record) error {
		n++
		if n == 5 {
			return disk
		}
		return nil
	})
	if !errors.Is(err, disk) {
		t.Fatalf("err = %v, want the emit error", err)
	}
}

func TestNewRecordDisplayUnits(t *testing.T) {
	prob := fakeProblem(Design{}, 3, 2)
	r := (&recordMaker{prob: prob}).record(5) // a = 1.6 (SI) = 160 %, b = 1.1
	if math.Abs(r.Values[0]-160) > 1e-9 || r.Values[1] != 1.1 {
		t.Errorf("display values %v, want [160 1.1]", r.Values)
	}
}

// TestOutsideChecksRoundTrip: points outside the model's checks keep the
// checks' names through both file formats, and the summary lists them
// apart and leaves them out of the pairings' figures.
func TestOutsideChecksRoundTrip(t *testing.T) {
	out := func(p []float64) []string {
		switch {
		case p[0] > 1.5 && p[1] > 1.0:
			return []string{"bottoms", "antoine_ben"}
		case p[0] > 1.5:
			return []string{"bottoms"}
		}
		return nil
	}
	for _, f := range []Format{CSV, JSONL} {
		prob := fakeProblem(Design{}, 5, 4)
		prob.NewWorker = func() Worker { return &fakeWorker{outside: out} }
		data, recs := runAll(t, prob, nil, f)
		file, err := Read("sweep", bytes.NewReader(data))
		if err != nil {
			t.Fatalf("%v: %v", f, err)
		}
		if !reflect.DeepEqual(file.Records, recs) {
			t.Errorf("%v: records read back differ from those written", f)
		}
		outside := 0
		for _, r := range file.Records {
			if r.Outside != nil {
				outside++
				if r.Outside[0] != "bottoms" {
					t.Errorf("%v: point %d outside %v", f, r.Index, r.Outside)
				}
			}
		}
		if outside != 4 { // a = 1.6 is the last row, 4 points
			t.Errorf("%v: %d points outside the checks, want 4", f, outside)
		}
		s, err := Summarize(prob.Header, file.Records)
		if err != nil {
			t.Fatal(err)
		}
		if len(s.Outside) != 4 || s.Converged != 20 || !strings.Contains(s.Outside[3].Reason, "bottoms, antoine_ben") {
			t.Errorf("%v: summary outside %+v, converged %d", f, s.Outside, s.Converged)
		}
		for _, p := range s.Pairings {
			for _, l := range p.Lambda {
				if l.MinAt == nil || l.MaxAt == nil || l.MinAt.Index >= 16 || l.MaxAt.Index >= 16 {
					t.Errorf("%v: %s's λ range %+v takes a point outside the checks", f, p.Label, l)
				}
			}
		}
	}
}
