package interact

import (
	"cmp"
	"fmt"
	"math"
	"slices"
	"strconv"
	"strings"

	"gonum.org/v1/gonum/mat"
)

// Verdict is the screening class of a pairing.
type Verdict int

const (
	Recommended Verdict = iota // no caution, every paired λ close to 1
	Acceptable                 // no caution, some paired λ further from 1
	Cautioned                  // at least one caution: read the reasons
	Rejected                   // a screen that rules the pairing out
)

var verdictNames = [...]string{"recommended", "acceptable", "caution", "rejected"}

func (v Verdict) String() string {
	if v >= 0 && int(v) < len(verdictNames) {
		return verdictNames[v]
	}
	return fmt.Sprintf("Verdict(%d)", int(v))
}

// MarshalText writes the verdict's name, for JSON.
func (v Verdict) MarshalText() ([]byte, error) { return []byte(v.String()), nil }

// Thresholds are the screening limits. A zero field takes the default in
// its comment (our defaults, common practice).
type Thresholds struct {
	LambdaLow  float64 // caution below; default 0.5
	LambdaHigh float64 // caution above; default 4
	GoodLow    float64 // recommended needs every paired λ >= this; default 0.67
	GoodHigh   float64 // recommended needs every paired λ <= this; default 1.5
	NISmall    float64 // caution when 0 < NI < this, n >= 3; default 0.1
	RDGHigh    float64 // caution when a relative disturbance gain |β| exceeds this; default 4
	CondHigh   float64 // note on every pairing when the minimised condition number exceeds this; default 50
}

func (t Thresholds) withDefaults() Thresholds {
	def := func(v *float64, d float64) {
		if *v == 0 {
			*v = d
		}
	}
	def(&t.LambdaLow, 0.5)
	def(&t.LambdaHigh, 4)
	def(&t.GoodLow, 0.67)
	def(&t.GoodHigh, 1.5)
	def(&t.NISmall, 0.1)
	def(&t.RDGHigh, 4)
	def(&t.CondHigh, 50)
	return t
}

// Options control Analyze. A nil *Options means the defaults.
type Options struct {
	Scaling Scaling // how gains are scaled before analysis; default ScaleNone

	// MaxPairings is how many ranked pairings Analyze returns; 0 means 10,
	// negative means all of them (for n > MaxEnumerate, all means the
	// 1000 best by the separable part of the score). All is costly for
	// n = 8: integrity checks 246 loop subsets of every pairing that is not
	// rejected.
	MaxPairings int

	Thresholds Thresholds

	// Brief leaves out the words: each PairingResult's Reasons and Label,
	// and the Analysis's Method, stay empty. Every number, verdict and the
	// ranking are those of the full analysis; notes that hold for every
	// pairing are kept, since they decide verdicts. It is for callers that
	// analyse many points and keep only the numbers (an envelope sweep).
	Brief bool

	// NoDirections leaves out of the Analysis the singular vectors, the
	// element sensitivities and the scalings: SVD.U, SVD.V, Sensitivity,
	// Dl and Dr are nil. Everything else is as without it, bit for bit
	// (RGA, Det, SVD.Values, SVD.Cond, MinCond, every pairing's numbers,
	// verdicts and the ranking). It is for callers that read none of those
	// five (an envelope sweep); an Analyzer analysing 2x2 gain sets briefly
	// then skips their arithmetic, other analyses compute and drop them.
	NoDirections bool
}

// Analysis is the interaction analysis of a gain set at one operating point.
// (Analyzer.Analyze resets it field by field: a new field is reset there.)
type Analysis struct {
	Source  string
	Scaling Scaling

	// The square system analysed. When the gain set is not square these are
	// the signals Selection kept; OutputIndex and InputIndex give their
	// positions in the gain set.
	Outputs, Inputs, Disturbances []Signal
	OutputIndex, InputIndex       []int
	K, Kd                         *mat.Dense // scaled gains of the square system; Kd nil without disturbances

	Selection *Selection // non-nil when the gain set was not square

	RGA         *mat.Dense // Λ of K
	Sensitivity *mat.Dense // 1/λ_ij: relative error in k_ij alone that makes K singular
	Det         float64    // det K (scaled)
	SVD         *SVDResult // of the scaled K
	MinCond     float64    // γ*, minimised over diagonal scalings
	Dl, Dr      []float64  // the scalings attaining γ*

	Method   string // how the pairings were searched, in words
	Screened int    // pairings screened
	Rejected int    // of those, how many were rejected
	Pairings []PairingResult
	Notes    []string // findings that hold for every pairing
	Caution  string   // the package Caution, always set
}

// Selection records how a non-square gain set was cut to a square one.
type Selection struct {
	RGA     *mat.Dense // the non-square RGA, K ∘ (K⁺)ᵀ of the whole scaled K
	Outputs bool       // true when outputs were chosen (more outputs than inputs), false for inputs
	Sums    []float64  // row sums (Outputs) or column sums of RGA
	Kept    []int      // chosen rows (or columns), best first
	Dropped []int      // the others, best first
	Reasons []string
}

// PairingResult is the screen of one pairing.
type PairingResult struct {
	Pairs        Pairing
	Label        string    // "xD-R, xB-S"
	Lambdas      []float64 // paired relative gains, by output
	Niederlinski float64
	RGANumber    float64 // ||Λ - P||_sum
	Verdict      Verdict
	Score        float64          // lower is better; see the package documentation
	Reasons      []string         // plain-language findings, rejections and cautions first
	Integrity    []SubsystemCheck // the failing subsystems only
	RDG          *mat.Dense       // relative disturbance gains β (outputs × disturbances); nil without disturbances
}

func selectSquare(g *GainSet, k *mat.Dense) (*Selection, error) {
	m, n := k.Dims()
	sel := &Selection{RGA: new(mat.Dense), Outputs: m > n}
	if err := RGAPinv(sel.RGA, k); err != nil {
		return nil, fmt.Errorf("interact: cannot choose a square subsystem of the %dx%d gain matrix: %w", m, n, err)
	}
	var sigs []Signal
	var keep int
	if sel.Outputs {
		sigs, keep = g.Outputs, n
		for i := 0; i < m; i++ {
			sel.Sums = append(sel.Sums, mat.Sum(sel.RGA.RowView(i)))
		}
	} else {
		sigs, keep = g.Inputs, m
		for j := 0; j < n; j++ {
			sel.Sums = append(sel.Sums, mat.Sum(sel.RGA.ColView(j)))
		}
	}
	order := seq(len(sigs))
	slices.SortStableFunc(order, func(x, y int) int { return cmp.Compare(sel.Sums[y], sel.Sums[x]) })
	sel.Kept, sel.Dropped = order[:keep], order[keep:]
	list := func(idx []int) string {
		parts := make([]string, len(idx))
		for k, i := range idx {
			parts[k] = fmt.Sprintf("%s (%s)", sigs[i].Name, fmtNum(sel.Sums[i]))
		}
		return strings.Join(parts, ", ")
	}
	if sel.Outputs {
		sel.Reasons = append(sel.Reasons,
			fmt.Sprintf("%d outputs but only %d inputs: at most %d outputs can be held at set points. Kept %s; dropped %s.", m, n, n, list(sel.Kept), list(sel.Dropped)),
			"The number in brackets is the row sum of the non-square RGA K ∘ (K⁺)ᵀ (Chang & Yu 1990): the share of that output lying in the range of K, 1 when the inputs can move it independently of the others, near 0 when they hardly can. The outputs with the largest sums are kept.")
	} else {
		sel.Reasons = append(sel.Reasons,
			fmt.Sprintf("%d inputs for only %d outputs: %d inputs are enough. Kept %s; the others (%s) are spare and may serve as valve-position or optimisation handles.", n, m, m, list(sel.Kept), list(sel.Dropped)),
			"The number in brackets is the column sum of the non-square RGA K ∘ (K⁺)ᵀ (Chang & Yu 1990): how much of that input's effect is independent of the others. The inputs with the largest sums are kept.")
	}
	return sel, nil
}

func pick(k *mat.Dense, rows, cols []int) *mat.Dense {
	out := mat.NewDense(len(rows), len(cols), nil)
	for a, i := range rows {
		for b, j := range cols {
			out.Set(a, b, k.At(i, j))
		}
	}
	return out
}

func seq(n int) []int {
	s := make([]int, n)
	for i := range s {
		s[i] = i
	}
	return s
}

func factorial(n int) int {
	f := 1
	for i := 2; i <= n; i++ {
		f *= i
	}
	return f
}

func sourceName(g *GainSet) string {
	if g.Source == "" {
		return "the caller"
	}
	return g.Source
}

// fmtNum prints a number with four significant digits, no exponent for
// ordinary magnitudes.
func fmtNum(v float64) string {
	if math.IsInf(v, 0) || math.IsNaN(v) {
		return strconv.FormatFloat(v, 'g', -1, 64)
	}
	if a := math.Abs(v); a != 0 && (a < 1e-3 || a >= 1e6) {
		return strconv.FormatFloat(v, 'e', 3, 64)
	}
	return strconv.FormatFloat(v, 'g', 4, 64)
}

// zeroRoundoff sets relative gains that are zero but for rounding (a gain
// that is structurally zero comes out of the implicit-function theorem as
// ±1e-17, say) to exactly zero, so that rounding noise never decides a
// sign screen. The threshold is 1e-10 of the largest |λ|, and at least 1e-10.
func zeroRoundoff(rga *mat.Dense) {
	raw := rga.RawMatrix()
	big := 1.0
	for i := 0; i < raw.Rows; i++ {
		for _, v := range raw.Data[i*raw.Stride : i*raw.Stride+raw.Cols] {
			// math.Max(big, |v|), its special cases (NaN, and +Inf after
			// a NaN) left to it.
			if a := math.Abs(v); a > big {
				big = a
			} else if a != a || big != big {
				big = math.Max(big, a)
			}
		}
	}
	tol := 1e-10 * big
	for i := 0; i < raw.Rows; i++ {
		row := raw.Data[i*raw.Stride : i*raw.Stride+raw.Cols]
		for j, v := range row {
			if math.Abs(v) < tol {
				row[j] = 0
			}
		}
	}
}
