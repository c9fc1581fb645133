package sweep

import (
	"fmt"
	"math"
	"sort"
	"strings"
)

// Summary is what a sweep found, computed from the header and the records
// alone (Summarize), so merged shard files give the same summary as one run.
type Summary struct {
	Model       string     `json:"model"`
	Fingerprint string     `json:"fingerprint"`
	Design      Design     `json:"design"`
	Axes        []AxisInfo `json:"axes"`
	Points      int        `json:"points"`    // records summarised
	Total       int        `json:"total"`     // points in the whole sweep
	Converged   int        `json:"converged"` // records that converged
	Failed      []Where    `json:"failed"`    // points that did not converge, with reasons
	// Outside lists the converged points where a quantity lies outside the
	// range of one of the model's checks (the reason names them): the
	// model does not hold there, so they are left out of the pairings'
	// shares, ranges and sign changes, of the best-pairing switches and of
	// the singularity findings.
	Outside []Where `json:"outside"`

	Pairings []PairingSummary `json:"pairings"`
	// Singular lists neighbouring points between which det K changes sign,
	// and points whose gain matrix is singular (one point, no partner).
	Singular []Between `json:"singular"`
	// Switches lists neighbouring points whose best pairings differ.
	Switches []Between `json:"switches"`
	// BestShare is the share of converged points at which each pairing is
	// the best one, by pairing name ("" for no passing pairing).
	BestShare map[string]float64 `json:"best_share"`
	Caution   string             `json:"caution,omitempty"`
}

// AxisInfo is an axis as the user reads it: display units.
type AxisInfo struct {
	Name   string  `json:"name"`
	Unit   string  `json:"unit,omitempty"`
	From   float64 `json:"from"`
	To     float64 `json:"to"`
	Points int     `json:"points"`
	Log    bool    `json:"log,omitempty"`
}

// Where is a point of the sweep: its number and axis values (display units).
type Where struct {
	Index  int                `json:"i"`
	At     map[string]float64 `json:"at"`
	Reason string             `json:"reason,omitempty"`
}

// Between is something that happens between two neighbouring points (or at
// one point when B is nil): a sign change, a switch of pairing.
type Between struct {
	What string `json:"what"`
	A    Where  `json:"a"`
	B    *Where `json:"b,omitempty"`
}

// Describe names the point with its axis values in axis order:
// "point 14 (f_caustic 2800 kg/h)".
func (w Where) Describe(axes []AxisInfo) string {
	parts := make([]string, 0, len(axes))
	for _, a := range axes {
		v, ok := w.At[a.Name]
		if !ok {
			continue
		}
		p := fmt.Sprintf("%s %.6g", a.Name, v)
		if a.Unit != "" {
			p += " " + a.Unit
		}
		parts = append(parts, p)
	}
	return fmt.Sprintf("point %d (%s)", w.Index, strings.Join(parts, ", "))
}

// Describe says where it happens: "between point 14 (...) and point 15 (...)",
// or "at point 3 (...)".
func (b Between) Describe(axes []AxisInfo) string {
	if b.B == nil {
		return "at " + b.A.Describe(axes)
	}
	return "between " + b.A.Describe(axes) + " and " + b.B.Describe(axes)
}

// Range is the smallest and largest value of a quantity over the converged
// points, with where they occur. Min and Max are NaN (null) when no point
// has a finite value.
type Range struct {
	Name  string `json:"name"`
	Min   Num    `json:"min"`
	Max   Num    `json:"max"`
	MinAt *Where `json:"min_at,omitempty"`
	MaxAt *Where `json:"max_at,omitempty"`
}

// PairingSummary is one pairing of interest across the envelope.
type PairingSummary struct {
	Label   string `json:"label"`
	Pairing string `json:"pairing"`
	Role    string `json:"role"`
	// PassShare is the share of converged points at which the pairing
	// passes every screen; BestShare the share at which it is the best.
	PassShare   float64   `json:"pass_share"`
	BestShare   float64   `json:"best_share"`
	Lambda      []Range   `json:"lambda"` // one per paired element
	NI          Range     `json:"ni"`
	SignChanges []Between `json:"sign_changes"`
	Verdict     string    `json:"verdict"`
}

// SingularCond is the condition number above which a gain matrix counts as
// singular at a point (about 1/sqrt(machine epsilon)): gains known to a few
// digits no longer fix a direction there. Common practice.
const SingularCond = 1e8

// Summarize computes the summary of the records (any subset of the sweep,
// in any order) under the header.
func Summarize(h *Header, recs []Record) (*Summary, error) {
	plan, err := NewPlan(h.Axes, h.Design)
	if err != nil {
		return nil, fmt.Errorf("the header's design: %w", err)
	}
	if plan.Len() != h.Total {
		return nil, fmt.Errorf("the header says %d points, its design has %d", h.Total, plan.Len())
	}
	byIndex := make(map[int]*Record, len(recs))
	order := make([]int, 0, len(recs))
	for k := range recs {
		r := &recs[k]
		if err := r.check(h); err != nil {
			return nil, err
		}
		if byIndex[r.Index] != nil {
			return nil, fmt.Errorf("point %d appears twice", r.Index)
		}
		byIndex[r.Index] = r
		order = append(order, r.Index)
	}
	sort.Ints(order)

	s := &Summary{Model: h.Model, Fingerprint: h.Fingerprint, Design: h.Design, Total: h.Total,
		Points: len(recs), Caution: h.Caution, Failed: []Where{}, Outside: []Where{}, Singular: []Between{}, Switches: []Between{},
		BestShare: map[string]float64{}}
	for _, a := range h.Axes {
		s.Axes = append(s.Axes, AxisInfo{Name: a.Name, Unit: a.Unit, From: a.Display(a.From), To: a.Display(a.To), Points: a.Points, Log: a.Log})
	}
	where := func(r *Record) Where {
		w := Where{Index: r.Index, At: map[string]float64{}}
		for a, ax := range h.Axes {
			w.At[ax.Name] = r.Values[a]
		}
		return w
	}
	ok := func(r *Record) bool { return r != nil && r.Converged && r.RGA != nil && r.Outside == nil }

	var analysed []*Record
	for _, i := range order {
		r := byIndex[i]
		if !r.Converged {
			w := where(r)
			w.Reason = r.Reason
			s.Failed = append(s.Failed, w)
			continue
		}
		s.Converged++
		if r.Outside != nil {
			w := where(r)
			w.Reason = "outside the model's checks: " + strings.Join(r.Outside, ", ")
			s.Outside = append(s.Outside, w)
			continue
		}
		if ok(r) {
			analysed = append(analysed, r)
		} else {
			w := where(r)
			s.Singular = append(s.Singular, Between{What: "no gains: " + r.Reason, A: w})
			continue
		}
		if r.Cond > SingularCond || math.IsInf(r.Cond, 0) {
			s.Singular = append(s.Singular, Between{What: fmt.Sprintf("K nearly singular (condition number %.3g)", r.Cond), A: where(r)})
		}
	}
	n := float64(len(analysed))
	for _, r := range analysed {
		s.BestShare[r.Best] += 1 / n
	}

	neigh := plan.Neighbours()
	for _, e := range neigh {
		a, b := byIndex[e[0]], byIndex[e[1]]
		if !ok(a) || !ok(b) {
			continue
		}
		wa, wb := where(a), where(b)
		if !math.IsNaN(a.Det) && !math.IsNaN(b.Det) && (a.Det > 0) != (b.Det > 0) {
			s.Singular = append(s.Singular, Between{What: "det K changes sign", A: wa, B: &wb})
		}
		if a.Best != b.Best {
			s.Switches = append(s.Switches, Between{What: quoteBest(a.Best) + " -> " + quoteBest(b.Best), A: wa, B: &wb})
		}
	}

	for k, pr := range h.Pairings {
		ps := PairingSummary{Label: pr.Label, Pairing: pr.Name, Role: pr.Role, SignChanges: []Between{}}
		pass, best := 0, 0
		for _, r := range analysed {
			if r.Pass != nil && r.Pass[k] {
				pass++
			}
			if r.Best == pr.Name {
				best++
			}
		}
		if n > 0 {
			ps.PassShare, ps.BestShare = float64(pass)/n, float64(best)/n
		}
		for i, j := range pr.Input {
			if j < 0 {
				continue
			}
			name := "λ(" + h.Outputs[i].Name + ":" + h.Inputs[j].Name + ")"
			ps.Lambda = append(ps.Lambda, rangeOf(name, analysed, where, func(r *Record) float64 { return r.Lambda(h, pr, i) }))
			for _, e := range neigh {
				a, b := byIndex[e[0]], byIndex[e[1]]
				if !ok(a) || !ok(b) {
					continue
				}
				la, lb := a.Lambda(h, pr, i), b.Lambda(h, pr, i)
				if !math.IsNaN(la) && !math.IsNaN(lb) && (la > 0) != (lb > 0) {
					wb := where(b)
					ps.SignChanges = append(ps.SignChanges, Between{What: name + " changes sign", A: where(a), B: &wb})
				}
			}
		}
		ps.NI = rangeOf("NI", analysed, where, func(r *Record) float64 {
			if r.NI == nil {
				return math.NaN()
			}
			return r.NI[k]
		})
		ps.Verdict = verdict(&ps, len(analysed), len(s.Singular) > 0, s.Axes)
		s.Pairings = append(s.Pairings, ps)
	}
	return s, nil
}

func quoteBest(b string) string {
	if b == "" {
		return "(none passes)"
	}
	return b
}

func rangeOf(name string, recs []*Record, where func(*Record) Where, f func(*Record) float64) Range {
	rg := Range{Name: name, Min: Num(math.NaN()), Max: Num(math.NaN())}
	for _, r := range recs {
		v := f(r)
		if math.IsNaN(v) || math.IsInf(v, 0) {
			continue
		}
		if rg.MinAt == nil || v < float64(rg.Min) {
			rg.Min = Num(v)
			w := where(r)
			rg.MinAt = &w
		}
		if rg.MaxAt == nil || v > float64(rg.Max) {
			rg.Max = Num(v)
			w := where(r)
			rg.MaxAt = &w
		}
	}
	return rg
}

// verdict says in plain words whether the pairing holds over the envelope.
func verdict(ps *PairingSummary, analysed int, singular bool, axes []AxisInfo) string {
	if analysed == 0 {
		return "no point could be analysed: nothing to judge"
	}
	pct := func(f float64) string { return fmt.Sprintf("%.0f %%", 100*f) }
	var parts []string
	switch {
	case len(ps.SignChanges) > 0:
		parts = append(parts, fmt.Sprintf("unsafe: a paired relative gain changes sign inside the envelope (%d places, first %s); the loops lose integrity there",
			len(ps.SignChanges), ps.SignChanges[0].Describe(axes)))
	case ps.PassShare == 1:
		parts = append(parts, fmt.Sprintf("holds across the envelope: passes every screen at all %d analysed points", analysed))
	case ps.PassShare >= 0.5:
		parts = append(parts, fmt.Sprintf("holds over part of the envelope: passes every screen at %s of analysed points", pct(ps.PassShare)))
	case ps.PassShare > 0:
		parts = append(parts, fmt.Sprintf("fails over most of the envelope: passes every screen at only %s of analysed points", pct(ps.PassShare)))
	default:
		parts = append(parts, "cautioned or rejected everywhere: passes every screen at no analysed point (see the reasons of the analysis at the nominal point)")
	}
	if ps.BestShare == 1 {
		parts = append(parts, "best-ranked pairing at every point")
	} else if ps.BestShare > 0 {
		parts = append(parts, fmt.Sprintf("best pairing at %s of points", pct(ps.BestShare)))
	} else if ps.BestShare == 0 {
		parts = append(parts, "never the best pairing")
	}
	if singular {
		parts = append(parts, "the gain matrix turns singular somewhere in the envelope")
	}
	return strings.Join(parts, "; ")
}

// Num is a number in a summary: NaN marshals as null and ±Inf as the
// strings "+Inf" and "-Inf", which plain JSON cannot carry.
type Num float64

func (n Num) MarshalJSON() ([]byte, error) { return appendJSONNum(nil, float64(n)), nil }

func (n *Num) UnmarshalJSON(b []byte) error { return (*jnum)(n).UnmarshalJSON(b) }
