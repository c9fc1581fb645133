package sweep

import (
	"fmt"
	"math"
)

// Axis is one axis of a sweep: a parameter slot of the model and the range
// it moves over. From and To are in coherent SI.
type Axis struct {
	Name   string  `json:"name"`          // the parameter's model name: "F", "z_feed"
	Param  int     `json:"param"`         // the slot in the parameter vector p
	From   float64 `json:"from"`          // SI
	To     float64 `json:"to"`            // SI
	Points int     `json:"points"`        // grid points along the axis (1 pins the value at From)
	Log    bool    `json:"log,omitempty"` // logarithmic spacing (a range above zero)

	// Nominal is the parameter's nominal value (SI): scattered designs start
	// their chains from the point nearest to it.
	Nominal float64 `json:"nominal"`

	// Unit is the display unit: display = (SI - Offset) / Scale. A zero
	// Scale means 1.
	Unit   string  `json:"unit,omitempty"`
	Scale  float64 `json:"scale,omitempty"`
	Offset float64 `json:"offset,omitempty"`
}

// Display converts an SI value on the axis to its display unit.
func (a Axis) Display(si float64) float64 {
	s := a.Scale
	if s == 0 {
		s = 1
	}
	return (si - a.Offset) / s
}

// Label is the axis name with its unit, for table headers and plot axes:
// "F [kmol/min]".
func (a Axis) Label() string {
	if a.Unit == "" {
		return a.Name
	}
	return a.Name + " [" + a.Unit + "]"
}

// Check reports what is wrong with the axis, in words the user can act on.
func (a Axis) Check() error {
	switch {
	case math.IsNaN(a.From) || math.IsNaN(a.To) || math.IsInf(a.From, 0) || math.IsInf(a.To, 0):
		return fmt.Errorf("axis %s: the range must be finite", a.Name)
	case a.Points < 1:
		return fmt.Errorf("axis %s: needs at least 1 point, got %d", a.Name, a.Points)
	case a.Points > 1 && a.From == a.To:
		return fmt.Errorf("axis %s: from and to are equal; give a range or 1 point", a.Name)
	case a.Log && (a.From <= 0 || a.To <= 0):
		// A unit offset (degC) makes "positive" a statement about SI
		// values; say both.
		return fmt.Errorf("axis %s: logarithmic spacing needs a range above zero (in SI: %g to %g)", a.Name, a.From, a.To)
	}
	return nil
}

// Values returns the grid values along the axis, in SI, from From to To.
// The end points are exact.
func (a Axis) Values() []float64 {
	v := make([]float64, a.Points)
	if a.Points == 1 {
		v[0] = a.From
		return v
	}
	n := float64(a.Points - 1)
	for i := range v {
		v[i] = a.at(float64(i) / n)
	}
	v[0], v[a.Points-1] = a.From, a.To
	return v
}

// at maps t in [0, 1] to the axis, linearly or logarithmically.
func (a Axis) at(t float64) float64 {
	if a.Log {
		return a.From * math.Pow(a.To/a.From, t)
	}
	return a.From + t*(a.To-a.From)
}

// unit maps an SI value to [0, 1] along the axis (in log space for a
// logarithmic axis): the coordinates in which distances are measured.
func (a Axis) unit(v float64) float64 {
	if a.From == a.To {
		return 0
	}
	if a.Log {
		if v <= 0 {
			return 0
		}
		return math.Log(v/a.From) / math.Log(a.To/a.From)
	}
	return (v - a.From) / (a.To - a.From)
}
