package units

import "strings"

// The seven SI base quantities, in the order Dim stores them.
const (
	iLength = iota
	iMass
	iTime
	iCurrent
	iTemperature
	iAmount
	iLuminous
	nBase
)

// baseSymbol is the SI base unit of each base quantity.
var baseSymbol = [nBase]string{"m", "kg", "s", "A", "K", "mol", "cd"}

// displayOrder is the order in which Dim.String writes base units:
// mass first, so a pressure reads "kg/(m*s^2)" and an energy "kg*m^2/s^2".
var displayOrder = [nBase]int{iMass, iLength, iTime, iCurrent, iTemperature, iAmount, iLuminous}

// Dim is a physical dimension: rational exponents of the SI base quantities
// length (m), mass (kg), time (s), current (A), temperature (K), amount (mol)
// and luminous intensity (cd). Dims are comparable with ==; the zero value is
// dimensionless.
type Dim struct {
	e [nBase]exp
}

// exp stores a normalised Rat as numerator and denominator-minus-one, so that
// the zero value is 0/1 and == on Dim compares dimensions.
type exp struct{ num, denM1 int }

func toExp(r Rat) exp  { r = r.canon(); return exp{r.Num, r.Den - 1} }
func (x exp) rat() Rat { return Rat{x.num, x.denM1 + 1} }

func base(i int) Dim {
	var d Dim
	d.e[i] = exp{1, 0}
	return d
}

// Length returns the dimension of length (m).
func Length() Dim { return base(iLength) }

// Mass returns the dimension of mass (kg).
func Mass() Dim { return base(iMass) }

// Time returns the dimension of time (s).
func Time() Dim { return base(iTime) }

// Current returns the dimension of electric current (A).
func Current() Dim { return base(iCurrent) }

// Temperature returns the dimension of thermodynamic temperature (K).
func Temperature() Dim { return base(iTemperature) }

// Amount returns the dimension of amount of substance (mol).
func Amount() Dim { return base(iAmount) }

// Luminous returns the dimension of luminous intensity (cd).
func Luminous() Dim { return base(iLuminous) }

// NewDim returns the dimension m^length * kg^mass * s^time * A^current *
// K^temperature * mol^amount * cd^luminous.
func NewDim(length, mass, time, current, temperature, amount, luminous Rat) Dim {
	var d Dim
	for i, r := range [nBase]Rat{length, mass, time, current, temperature, amount, luminous} {
		d.e[i] = toExp(r)
	}
	return d
}

// dimOf builds a Dim from integer exponents in the order m, kg, s, A, K, mol, cd.
func dimOf(m, kg, s, a, k, mol, cd int) Dim {
	return NewDim(Rat{m, 1}, Rat{kg, 1}, Rat{s, 1}, Rat{a, 1}, Rat{k, 1}, Rat{mol, 1}, Rat{cd, 1})
}

// Exponents returns the exponents of m, kg, s, A, K, mol and cd, in that order.
func (d Dim) Exponents() [7]Rat {
	var r [7]Rat
	for i, x := range d.e {
		r[i] = x.rat()
	}
	return r
}

// Mul returns the dimension of a product, d*e.
func (d Dim) Mul(e Dim) Dim {
	var r Dim
	for i := range r.e {
		r.e[i] = toExp(d.e[i].rat().Add(e.e[i].rat()))
	}
	return r
}

// Div returns the dimension of a quotient, d/e.
func (d Dim) Div(e Dim) Dim {
	var r Dim
	for i := range r.e {
		r.e[i] = toExp(d.e[i].rat().Sub(e.e[i].rat()))
	}
	return r
}

// Pow returns the dimension d^p.
func (d Dim) Pow(p Rat) Dim {
	var r Dim
	for i := range r.e {
		r.e[i] = toExp(d.e[i].rat().Mul(p))
	}
	return r
}

// IsDimensionless reports whether every exponent of d is zero.
func (d Dim) IsDimensionless() bool {
	return d == Dim{}
}

// maxExp returns the largest |numerator| or denominator among the exponents.
func (d Dim) maxExp() int {
	m := 0
	for _, x := range d.e {
		m = max(m, absInt(x.num), x.denM1+1)
	}
	return m
}

// String writes d in SI base units, readable: "kg/s", "mol/s", "kg/(m*s^2)",
// "m^0.5", "1/s", and "" when d is dimensionless. Exponents that are not
// terminating decimals are written as fractions: "m^(1/3)".
func (d Dim) String() string {
	var num, den []string
	for _, i := range displayOrder {
		r := d.e[i].rat()
		switch {
		case r.Num > 0:
			num = append(num, powText(baseSymbol[i], r))
		case r.Num < 0:
			den = append(den, powText(baseSymbol[i], r.Neg()))
		}
	}
	s := strings.Join(num, "*")
	if len(den) == 0 {
		return s
	}
	if s == "" {
		s = "1"
	}
	if len(den) == 1 {
		return s + "/" + den[0]
	}
	return s + "/(" + strings.Join(den, "*") + ")"
}

// powText writes sym^r for r > 0.
func powText(sym string, r Rat) string {
	if r.Num == 1 && r.Den == 1 {
		return sym
	}
	return sym + "^" + expText(r)
}

// expText writes an exponent as it would be typed after "^": "2", "-1",
// "0.5", "(1/3)", "(1/64)". Parse reads back whatever it writes.
func expText(r Rat) string {
	r = r.canon()
	if r.Den == 1 {
		return r.String()
	}
	if s, ok := r.decimal(); ok && decimals(s) <= maxExpDecimals {
		return s
	}
	return "(" + r.String() + ")"
}

// Describe returns String followed by a well-known name when one fits,
// such as "kg/(m*s^2) (Pa)" or "kg/s (mass flow)", and "dimensionless" for
// the dimensionless Dim.
func (d Dim) Describe() string {
	if d.IsDimensionless() {
		return "dimensionless"
	}
	s := d.String()
	for _, n := range knownDims {
		if n.dim == d {
			return s + " (" + n.name + ")"
		}
	}
	return s
}

// knownDims names dimensions that a process engineer will recognise. It is
// read-only.
var knownDims = []struct {
	dim  Dim
	name string
}{
	{dimOf(0, 0, -1, 0, 0, 0, 0), "Hz, a frequency or rate"},
	{dimOf(1, 1, -2, 0, 0, 0, 0), "N"},
	{dimOf(-1, 1, -2, 0, 0, 0, 0), "Pa"},
	{dimOf(2, 1, -2, 0, 0, 0, 0), "J"},
	{dimOf(2, 1, -3, 0, 0, 0, 0), "W"},
	{dimOf(2, 0, 0, 0, 0, 0, 0), "area"},
	{dimOf(3, 0, 0, 0, 0, 0, 0), "volume"},
	{dimOf(1, 0, -1, 0, 0, 0, 0), "velocity"},
	{dimOf(1, 0, -2, 0, 0, 0, 0), "acceleration"},
	{dimOf(0, 1, -1, 0, 0, 0, 0), "mass flow"},
	{dimOf(0, 0, -1, 0, 0, 1, 0), "molar flow"},
	{dimOf(3, 0, -1, 0, 0, 0, 0), "volumetric flow"},
	{dimOf(-3, 1, 0, 0, 0, 0, 0), "density"},
	{dimOf(-3, 0, 0, 0, 0, 1, 0), "concentration, mol/m^3"},
	{dimOf(0, 1, 0, 0, 0, -1, 0), "molar mass"},
	{dimOf(2, 0, -2, 0, 0, 0, 0), "J/kg"},
	{dimOf(2, 1, -2, 0, 0, -1, 0), "J/mol"},
	{dimOf(2, 0, -2, 0, -1, 0, 0), "J/(kg*K)"},
	{dimOf(2, 1, -2, 0, -1, -1, 0), "J/(mol*K)"},
	{dimOf(2, 1, -2, 0, -1, 0, 0), "J/K"},
	{dimOf(2, 1, -3, 0, -1, 0, 0), "W/K"},
	{dimOf(0, 1, -3, 0, -1, 0, 0), "W/(m^2*K)"},
	{dimOf(1, 1, -3, 0, -1, 0, 0), "W/(m*K)"},
	{dimOf(-1, 1, -1, 0, 0, 0, 0), "Pa*s"},
	{dimOf(2, 0, -1, 0, 0, 0, 0), "m^2/s"},
	{dimOf(0, 0, -1, 0, 1, 0, 0), "K/s"},
}

// decimals counts the digits after the point in a decimal number.
func decimals(s string) int {
	if i := strings.IndexByte(s, '.'); i >= 0 {
		return len(s) - i - 1
	}
	return 0
}
