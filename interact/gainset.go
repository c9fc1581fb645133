package interact

import (
	"fmt"
	"strings"

	"gonum.org/v1/gonum/mat"
)

// Signal describes one row or column of a gain matrix: an output, an input or
// a disturbance.
type Signal struct {
	Name    string  // "xD", "T[3]"
	Unit    string  // display unit, "" when dimensionless or unknown
	Scale   float64 // SI per display unit, for differences; 0 when unknown
	Span    float64 // expected range in display units; 0 = not given
	Nominal float64 // nominal value in display units
}

// GainSet is a steady-state gain matrix with the signals it relates.
type GainSet struct {
	Outputs, Inputs, Disturbances []Signal

	K  *mat.Dense // dy/du in display units: rows outputs, columns inputs
	Kd *mat.Dense // dy/dd in display units; nil when there are no disturbances

	Source string // "model" or the file the gains were read from
}

// Scaling selects how Scaled makes the gains dimensionless.
type Scaling int

const (
	ScaleNone    Scaling = iota // gains as given, in display units
	ScaleSpan                   // K_ij × span(u_j) / span(y_i)
	ScaleNominal                // K_ij × nominal(u_j) / nominal(y_i)
)

var scalingNames = [...]string{ScaleNone: "none", ScaleSpan: "span", ScaleNominal: "nominal"}

func (s Scaling) String() string {
	if s >= 0 && int(s) < len(scalingNames) {
		return scalingNames[s]
	}
	return fmt.Sprintf("Scaling(%d)", int(s))
}

// ParseScaling reads "none", "span" or "nominal".
func ParseScaling(s string) (Scaling, error) {
	for i, n := range scalingNames {
		if strings.EqualFold(strings.TrimSpace(s), n) {
			return Scaling(i), nil
		}
	}
	return 0, fmt.Errorf("interact: unknown scaling %q: use none, span or nominal", s)
}

// Scaled returns the gain matrices scaled by s. Span scaling divides each row
// by its output's span and multiplies each column by its input's (or
// disturbance's) span; nominal scaling does the same with nominal values. The
// error names the first signal lacking a span or having a zero nominal value.
// Nominal scaling only makes sense for absolute units: with an affine unit
// (degC, barg) the zero is arbitrary. The RGA and the minimised condition
// number do not depend on the scaling;
// singular values, the plain condition number and disturbance gains do.
func (g *GainSet) Scaled(s Scaling) (k, kd *mat.Dense, err error) {
	k = new(mat.Dense)
	if g.Kd != nil {
		kd = new(mat.Dense)
	}
	if _, err := g.scaledInto(s, k, kd, nil); err != nil {
		return nil, nil, err
	}
	return k, kd, nil
}

// scaledInto is Scaled storing the scaled K in k and, when the gain set has
// disturbances, the scaled Kd in kd, reusing their storage and fy (the
// output factors, returned).
func (g *GainSet) scaledInto(s Scaling, k, kd *mat.Dense, fy []float64) ([]float64, error) {
	g.check()
	var err error
	fy = resizeFloats(fy, len(g.Outputs))
	if s == ScaleNone {
		// Every factor is 1 and v*1/1 is v: copy.
		copyInto(k, g.K)
		if g.Kd != nil {
			copyInto(kd, g.Kd)
		}
		return fy, nil
	}
	for i, o := range g.Outputs {
		if fy[i], err = scaleFactor(s, o, "output"); err != nil {
			return fy, err
		}
	}
	if err := scaleInto(k, g.K, g.Inputs, "input", s, fy); err != nil {
		return fy, err
	}
	if g.Kd != nil {
		if err := scaleInto(kd, g.Kd, g.Disturbances, "disturbance", s, fy); err != nil {
			return fy, err
		}
	}
	return fy, nil
}

// copyInto makes out a copy of m, reusing out's storage, element by
// element (rows of a gain matrix are too short for copy's call to pay).
func copyInto(out, m *mat.Dense) {
	r, c := m.Dims()
	reshape(out, r, c)
	src, dst := m.RawMatrix(), out.RawMatrix()
	for i := 0; i < r; i++ {
		d := dst.Data[i*dst.Stride : i*dst.Stride+c]
		for j, v := range src.Data[i*src.Stride : i*src.Stride+c] {
			d[j] = v
		}
	}
}

func scaleInto(out, m *mat.Dense, cols []Signal, role string, s Scaling, fy []float64) error {
	r, c := m.Dims()
	reshape(out, r, c)
	if s == ScaleNone {
		copyInto(out, m)
		return nil
	}
	for j := 0; j < c; j++ {
		fu, err := scaleFactor(s, cols[j], role)
		if err != nil {
			return err
		}
		for i := 0; i < r; i++ {
			out.Set(i, j, m.At(i, j)*fu/fy[i])
		}
	}
	return nil
}

func scaleFactor(s Scaling, sig Signal, role string) (float64, error) {
	switch s {
	case ScaleNone:
		return 1, nil
	case ScaleSpan:
		if !(sig.Span > 0) || isInfOrNaN(sig.Span) {
			return 0, fmt.Errorf("interact: span scaling needs a positive span for %s %q: give it a span", role, sig.Name)
		}
		return sig.Span, nil
	case ScaleNominal:
		if sig.Nominal == 0 || isInfOrNaN(sig.Nominal) {
			return 0, fmt.Errorf("interact: nominal scaling needs a non-zero nominal value for %s %q: give it a nominal value or use span scaling", role, sig.Name)
		}
		return sig.Nominal, nil
	}
	return 0, fmt.Errorf("interact: unknown scaling %v", s)
}

// check panics when the matrices disagree with the signal lists: a
// programmer's error, not the user's.
func (g *GainSet) check() {
	r, c := g.K.Dims()
	if r != len(g.Outputs) || c != len(g.Inputs) {
		panic(fmt.Sprintf("interact: GainSet K is %dx%d but has %d outputs and %d inputs", r, c, len(g.Outputs), len(g.Inputs)))
	}
	if g.Kd != nil {
		r, c := g.Kd.Dims()
		if r != len(g.Outputs) || c != len(g.Disturbances) {
			panic(fmt.Sprintf("interact: GainSet Kd is %dx%d but has %d outputs and %d disturbances", r, c, len(g.Outputs), len(g.Disturbances)))
		}
	}
}

func names(s []Signal) []string {
	out := make([]string, len(s))
	for i, x := range s {
		out[i] = x.Name
	}
	return out
}
