package units

import (
	"fmt"
	"math"
)

// Unit is a parsed unit. An absolute value v in the unit is v*Scale + Offset
// in coherent SI; a difference (a gain, a span, a tolerance) converts with
// Scale alone.
type Unit struct {
	Text   string  // normalised text as given ("kJ/(kg*K)"), "" when dimensionless
	Dim    Dim     // the SI dimension
	Scale  float64 // factor to coherent SI
	Offset float64 // non-zero only for an affine unit used alone (degC, degF, barg, psig, kPag)
}

// ToSI converts an absolute value in u to SI.
func (u Unit) ToSI(v float64) float64 { return v*u.scale() + u.Offset }

// FromSI converts an absolute SI value to u.
func (u Unit) FromSI(v float64) float64 { return (v - u.Offset) / u.scale() }

// DiffToSI converts a difference in u to SI: the offset does not apply.
func (u Unit) DiffToSI(dv float64) float64 { return dv * u.scale() }

// DiffFromSI converts a difference in SI to u: the offset does not apply.
func (u Unit) DiffFromSI(dv float64) float64 { return dv / u.scale() }

// IsAffine reports whether absolute values in u carry an offset.
func (u Unit) IsAffine() bool { return u.Offset != 0 }

// String returns u.Text, or "1" for the dimensionless unit.
func (u Unit) String() string {
	if u.Text == "" {
		return "1"
	}
	return u.Text
}

// scale treats the zero Unit as dimensionless with scale 1.
func (u Unit) scale() float64 {
	if u.Scale == 0 {
		return 1
	}
	return u.Scale
}

// Convert converts an absolute value v from one unit to another of the same
// dimension: 85 degC to degF, 1800 kg/h to kg/s. It returns a
// *MismatchError when the dimensions differ.
func Convert(v float64, from, to Unit) (float64, error) {
	if from.Dim != to.Dim {
		return math.NaN(), &MismatchError{From: from, To: to}
	}
	return to.FromSI(from.ToSI(v)), nil
}

// MismatchError is returned by Convert for units of different dimensions.
type MismatchError struct {
	From, To Unit
}

func (e *MismatchError) Error() string {
	return fmt.Sprintf("units: cannot convert %s [%s] to %s [%s]: the dimensions differ",
		e.From, e.From.Dim.Describe(), e.To, e.To.Dim.Describe())
}

// Error is a problem in a unit or quantity string, at a rune column.
type Error struct {
	Input string // the unit (or quantity) string
	Col   int    // 1-based rune column inside Input where the problem is
	Msg   string // what is wrong and what to write instead
}

func (e *Error) Error() string {
	return fmt.Sprintf("unit %q: col %d: %s", e.Input, e.Col, e.Msg)
}
