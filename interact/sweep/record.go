package sweep

import (
	"crypto/sha256"
	"encoding/hex"
	"encoding/json"
	"fmt"
	"math"
	"slices"
	"strings"
)

// FormatVersion is the first field of every sweep file's header. A reader
// refuses files of another version.
const FormatVersion = "loopwright-sweep/2"

// Quantity is a named output or input with its display unit.
type Quantity struct {
	Name string `json:"name"`
	Unit string `json:"unit,omitempty"`
}

// Pairing is a pairing of interest: the sweep records its Niederlinski
// index, its paired relative gains and whether it passes the screens at
// every point.
type Pairing struct {
	Label string `json:"label"` // short column label: "P1"
	Name  string `json:"name"`  // "top:L bottom:V"
	Role  string `json:"role"`  // "nominal best", "requested", "alternative"
	// Input[i] is the input paired with output i, or -1 when output i is
	// left unpaired (non-square systems).
	Input []int `json:"input"`
}

// PairingName spells a pairing as "out:in out:in", in output order.
func PairingName(outputs, inputs []Quantity, input []int) string {
	var b strings.Builder
	for i, j := range input {
		if j < 0 {
			continue
		}
		if b.Len() > 0 {
			b.WriteByte(' ')
		}
		b.WriteString(outputs[i].Name + ":" + inputs[j].Name)
	}
	return b.String()
}

// Header describes a sweep file: what was swept, how, and which share of it
// the file holds. Everything the summary needs besides the records is here,
// so files from several shards can be merged without the model.
type Header struct {
	Format      string     `json:"format"`
	Model       string     `json:"model"`
	Fingerprint string     `json:"fingerprint"`
	Axes        []Axis     `json:"axes"`
	Design      Design     `json:"design"`
	Total       int        `json:"total"` // points in the whole sweep
	Shard       Shard      `json:"shard"`
	Outputs     []Quantity `json:"outputs"`
	Inputs      []Quantity `json:"inputs"`
	Pairings    []Pairing  `json:"pairings"`
	Caution     string     `json:"caution,omitempty"`
}

// Seal computes the header's fingerprint from modelID (anything that
// identifies the model as solved: its expanded text, constants and
// overrides) and everything in the header but the shard. Files with equal
// fingerprints belong to the same sweep.
func (h *Header) Seal(modelID string) {
	c := *h
	c.Fingerprint, c.Shard = "", Shard{}
	b, err := json.Marshal(&c)
	if err != nil {
		panic(err) // a Header always marshals
	}
	sum := sha256.Sum256(append([]byte(modelID+"\x00"), b...))
	h.Fingerprint = hex.EncodeToString(sum[:16])
}

// Record is the result at one point of a sweep. Values, outputs and gains
// are in display units. A point that did not converge has Converged false,
// a Reason, and nil analysis fields; a point that converged but could not
// be analysed (a singular Jacobian) has Converged true and a Reason.
type Record struct {
	Index      int
	Values     []float64 // axis values, display units, in axis order
	Converged  bool
	Iterations int
	Reason     string

	Outputs []float64 // display units, in output order
	K       []float64 // gain matrix, row-major (outputs x inputs), display units
	RGA     []float64 // relative gain array, row-major
	Det     float64   // det K (NaN when K is not square)
	Cond    float64   // condition number of K (scaled as the analysis scales it)
	Best    string    // the best-ranked pairing that is not rejected, by name ("" when all are)
	NI      []float64 // Niederlinski index of each pairing of interest
	Pass    []bool    // whether each pairing of interest passes every screen
	// Outside names the model's checks whose quantity lies outside its
	// range at this point (a negative flow, a correlation beyond its
	// validity), in the model's order; nil when none does.
	Outside []string
}

// Lambda returns the paired relative gain of output i in pairing pr, or NaN.
func (r *Record) Lambda(h *Header, pr Pairing, i int) float64 {
	j := pr.Input[i]
	if r.RGA == nil || j < 0 {
		return math.NaN()
	}
	return r.RGA[i*len(h.Inputs)+j]
}

// clone returns a copy of the record that shares nothing with it.
func (r *Record) clone() *Record {
	c := *r
	c.Values, c.Outputs, c.K, c.RGA = slices.Clone(r.Values), slices.Clone(r.Outputs), slices.Clone(r.K), slices.Clone(r.RGA)
	c.NI, c.Pass, c.Outside = slices.Clone(r.NI), slices.Clone(r.Pass), slices.Clone(r.Outside)
	return &c
}

// normalize makes the record's shape a function of its content, so that a
// record read back from a file is equal to the one written: groups of
// values that are all missing become nil.
func (r *Record) normalize() {
	r.Outputs = nilIfAllNaN(r.Outputs)
	r.K = nilIfAllNaN(r.K)
	r.RGA = nilIfAllNaN(r.RGA)
	r.NI = nilIfAllNaN(r.NI)
	if len(r.Pass) == 0 {
		r.Pass = nil
	}
	if len(r.Outside) == 0 {
		r.Outside = nil
	}
	if !r.Converged {
		r.Outputs, r.K, r.RGA, r.NI, r.Pass, r.Outside = nil, nil, nil, nil, nil, nil
		r.Det, r.Cond, r.Best = math.NaN(), math.NaN(), ""
	}
	if math.IsNaN(r.Det) {
		r.Det = math.NaN() // one NaN bit pattern
	}
	if math.IsNaN(r.Cond) {
		r.Cond = math.NaN()
	}
}

func nilIfAllNaN(v []float64) []float64 {
	for _, x := range v {
		if !math.IsNaN(x) {
			return v
		}
	}
	return nil
}

// check reports a record whose shape does not fit the header: a file that
// was edited by hand or cut short.
func (r *Record) check(h *Header) error {
	no, ni, np := len(h.Outputs), len(h.Inputs), len(h.Pairings)
	switch {
	case r.Index < 0 || r.Index >= h.Total:
		return fmt.Errorf("point %d is outside the sweep's %d points", r.Index, h.Total)
	case len(r.Values) != len(h.Axes):
		return fmt.Errorf("point %d has %d axis values, the header %d axes", r.Index, len(r.Values), len(h.Axes))
	case r.Outputs != nil && len(r.Outputs) != no:
		return fmt.Errorf("point %d has %d outputs, the header %d", r.Index, len(r.Outputs), no)
	case r.K != nil && len(r.K) != no*ni, r.RGA != nil && len(r.RGA) != no*ni:
		return fmt.Errorf("point %d: gain matrix is not %d x %d", r.Index, no, ni)
	case r.NI != nil && len(r.NI) != np, r.Pass != nil && len(r.Pass) != np:
		return fmt.Errorf("point %d: results for %d pairings expected", r.Index, np)
	}
	return nil
}
