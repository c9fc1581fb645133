package units

import (
	"errors"
	"math"
	"testing"

	"gonum.org/v1/gonum/floats/scalar"
)

const sp811 = "NIST SP 811 App. B.8 via checkvalues.md §6"

// TestScale checks the SI factor of single and compound units.
func TestScale(t *testing.T) {
	for _, tc := range []struct {
		in   string
		want float64
		tol  float64 // relative
		src  string
	}{
		{"psi", 6894.757293168361, 1e-15, sp811 + " (psi = lbf/(0.0254 m)^2, derived exact)"},
		{"psia", 6894.757293168361, 1e-15, sp811 + " (psi)"},
		{"lbf/in^2", 6894.757293168361, 1e-15, sp811 + " (psi, built from lbf and inch)"},
		{"lb", 0.45359237, 0, sp811 + " (pound, fn. 22)"},
		{"lbf", 4.4482216152605, 1e-15, sp811 + " (pound-force, fn. 23)"},
		{"in", 0.0254, 0, sp811 + " (inch)"},
		{"ft", 0.3048, 0, sp811 + " (foot)"},
		{"gal", 3.785411784e-3, 1e-15, sp811 + " (US gallon = 231 in^3, NIST HB 44)"},
		{"gal_uk", 4.54609e-3, 0, sp811 + " (UK gallon)"},
		{"bbl", 0.158987294928, 1e-15, "US oil barrel = 42 US gal, common practice"},
		{"atm", 101325, 0, sp811 + " (standard atmosphere)"},
		{"bar", 1e5, 0, sp811 + " (bar)"},
		{"torr", 133.3223684, 1e-9, sp811 + " (torr = 101325/760)"},
		{"mmHg", 133.3224, 1e-6, sp811 + " (mmHg conventional, table value rounded)"},
		{"kgf", 9.80665, 0, sp811 + " (kgf)"},
		{"Btu", 1055.05585262, 1e-15, sp811 + " (Btu_IT, fn. 9)"},
		{"Btu_IT", 1055.056e0 * 1, 1e-6, sp811 + " (Btu_IT table value 1.055 056 E+03)"},
		{"cal", 4.184, 1e-15, sp811 + " (calorie_th)"},
		{"cal_IT", 4.1868, 1e-15, sp811 + " (calorie_IT)"},
		{"kcal", 4184, 1e-15, sp811 + " (calorie_th) with SI prefix k"},
		{"kWh", 3.6e6, 1e-15, sp811 + " (kWh)"},
		{"Btu/lb", 2326, 1e-12, sp811 + " (Btu_IT/lb -> J/kg)"},
		{"Btu/(lb*degF)", 4186.8, 1e-12, sp811 + " (Btu_IT/(lb F) -> J/(kg K)): degF inside a compound is a difference"},
		{"Btu/cal", 252.1644, 1e-6, sp811 + " (cross-check 1 Btu_IT = 252.164 cal_th)"},
		{"degR", 1 / 1.8, 1e-15, sp811 + " (T/K = (T/R)/1.8)"},
		{"hp", 745.6999, 1e-7, "from memory: SP 811 App. B.8 horsepower (550 ft*lbf/s) 7.456 999 E+02"},
		{"inH2O", 249.08891, 1e-12, "from memory: conventional inch of water, 1000 kg/m^3 * 9.80665 m/s^2 * 0.0254 m"},
		{"kJ/(kg*K)", 1000, 1e-15, "SI prefix kilo, common practice"},
		{"kJ/kg*K", 1000, 1e-15, "left to right: (kJ/kg)*K, common practice"},
		{"kmol/min", 1000.0 / 60, 1e-15, "SI prefix kilo, 1 min = 60 s, common practice"},
		{"kg/h", 1.0 / 3600, 1e-15, "1 h = 3600 s, common practice"},
		{"t/d", 1000.0 / 86400, 1e-15, "tonne = 1000 kg, day = 86400 s, common practice"},
		{"m^3/h", 1.0 / 3600, 1e-15, "common practice"},
		{"m³/h", 1.0 / 3600, 1e-15, "superscript exponent, common practice"},
		{"L/min", 1e-3 / 60, 1e-15, "litre = 1e-3 m^3, common practice"},
		{"mL", 1e-6, 1e-15, "common practice"},
		{"cP", 1e-3, 1e-15, "centipoise = 1 mPa*s, common practice"},
		{"MPa", 1e6, 0, "SI prefix mega, common practice"},
		{"hPa", 100, 0, "SI prefix hecto, common practice"},
		{"dam", 10, 0, "SI prefix deca, common practice"},
		{"µm", 1e-6, 1e-15, "SI prefix micro (micro sign), common practice"},
		{"μm", 1e-6, 1e-15, "SI prefix micro (Greek mu), common practice"},
		{"um", 1e-6, 1e-15, "SI prefix micro (ASCII u), common practice"},
		{"ms", 1e-3, 0, "milli + second (no exact symbol ms), common practice"},
		{"min", 60, 0, "exact symbol min beats m + in, common practice"},
		{"mmol/L", 1, 1e-15, "common practice"},
		{"%", 0.01, 0, "percent, common practice"},
		{"ppm", 1e-6, 0, "parts per million, common practice"},
		{"%/min", 0.01 / 60, 1e-15, "common practice"},
		{"1/s", 1, 0, "common practice"},
		{"Pa^0.5", 1, 0, "common practice"},
		{"bar^0.5", math.Sqrt(1e5), 1e-15, "valve equation units, common practice"},
		{"m^(1/2)", 1, 0, "common practice"},
		{"ft^3", 0.3048 * 0.3048 * 0.3048, 1e-15, sp811 + " (foot), cubed"},
		{"N.m", 1, 0, "dot as product, common practice"},
		{"N·m", 1, 0, "middle dot as product, common practice"},
		{"N m", 1, 0, "space as product, common practice"},
		{"kg**2", 1, 0, "** as power, common practice"},
		{"barg/h", 1e5 / 3600, 1e-15, "gauge inside a compound acts as bar, brief"},
		{"degC/min", 1.0 / 60, 1e-15, "degC inside a compound is a difference, common practice"},
		{"", 1, 0, "dimensionless"},
		{"1", 1, 0, "dimensionless"},
	} {
		u, err := Parse(tc.in)
		if err != nil {
			t.Errorf("Parse(%q): %v [%s]", tc.in, err, tc.src)
			continue
		}
		if !scalar.EqualWithinAbsOrRel(u.Scale, tc.want, 0, tc.tol) {
			t.Errorf("Parse(%q).Scale = %.17g, want %.17g [%s]", tc.in, u.Scale, tc.want, tc.src)
		}
	}
}

// TestAbsolute checks absolute conversions, where affine units add an offset.
func TestAbsolute(t *testing.T) {
	const temp = sp811 + " (temperature formulas)"
	const gauge = "absolute = gauge + 101325 Pa, common practice"
	for _, tc := range []struct {
		unit   string
		v, si  float64
		affine bool
		src    string
	}{
		{"degC", 0, 273.15, true, temp},
		{"degC", 100, 373.15, true, temp},
		{"°C", 25, 298.15, true, temp},
		{"degF", 32, 273.15, true, temp},
		{"degF", 212, 373.15, true, temp},
		{"degF", -40, 233.15, true, temp},
		{"°F", 200, (200 + 459.67) / 1.8, true, temp},
		{"degR", 491.67, 273.15, false, temp},
		{"K", 300, 300, false, temp},
		{"barg", 3.2, 421325, true, gauge},
		{"barg", 0, 101325, true, gauge},
		{"psig", 10, 10*6894.757293168361 + 101325, true, gauge + "; " + sp811 + " (psi)"},
		{"kPag", 1, 102325, true, gauge},
		{"MPag", 1.5, 1601325, true, gauge},
		{"(degC)", 20, 293.15, true, "parentheses alone keep the unit alone"},
		{"bar", 3.2, 320000, false, sp811 + " (bar)"},
		{"degC^1", 20, 20, false, "a power makes a compound: a difference"},
	} {
		u, err := Parse(tc.unit)
		if err != nil {
			t.Errorf("Parse(%q): %v", tc.unit, err)
			continue
		}
		if got := u.ToSI(tc.v); !scalar.EqualWithinAbsOrRel(got, tc.si, 1e-12, 1e-14) {
			t.Errorf("%v %s ToSI = %.17g, want %.17g [%s]", tc.v, tc.unit, got, tc.si, tc.src)
		}
		if back := u.FromSI(tc.si); !scalar.EqualWithinAbsOrRel(back, tc.v, 1e-12, 1e-12) {
			t.Errorf("%s FromSI(%v) = %.17g, want %v [%s]", tc.unit, tc.si, back, tc.v, tc.src)
		}
		if u.IsAffine() != tc.affine {
			t.Errorf("Parse(%q).IsAffine() = %v, want %v", tc.unit, u.IsAffine(), tc.affine)
		}
	}
}

// TestDifference checks that differences never carry an offset.
func TestDifference(t *testing.T) {
	for _, tc := range []struct {
		unit string
		dv   float64
		want float64
		src  string
	}{
		{"degF", 1.8, 1, sp811 + " (t/C = (t/F - 32)/1.8: a step of 1.8 F is 1 K)"},
		{"degF", 9, 5, sp811 + " (temperature formulas)"},
		{"degC", 5, 5, sp811 + " (T/K = t/C + 273.15)"},
		{"barg", 0.5, 50000, sp811 + " (bar)"},
		{"psig", 1, 6894.757293168361, sp811 + " (psi)"},
	} {
		u := MustParse(tc.unit)
		if got := u.DiffToSI(tc.dv); !scalar.EqualWithinAbsOrRel(got, tc.want, 1e-12, 1e-14) {
			t.Errorf("%s DiffToSI(%v) = %.17g, want %v [%s]", tc.unit, tc.dv, got, tc.want, tc.src)
		}
		if got := u.DiffFromSI(tc.want); !scalar.EqualWithinAbsOrRel(got, tc.dv, 1e-12, 1e-14) {
			t.Errorf("%s DiffFromSI(%v) = %.17g, want %v [%s]", tc.unit, tc.want, got, tc.dv, tc.src)
		}
	}
}

// TestDim checks the dimension of parsed units and how it reads.
func TestDim(t *testing.T) {
	for _, tc := range []struct {
		in, str, describe string
	}{
		{"kg/h", "kg/s", "kg/s (mass flow)"},
		{"kmol/min", "mol/s", "mol/s (molar flow)"},
		{"bar", "kg/(m*s^2)", "kg/(m*s^2) (Pa)"},
		{"psig", "kg/(m*s^2)", "kg/(m*s^2) (Pa)"},
		{"Pa^0.5", "kg^0.5/(m^0.5*s)", "kg^0.5/(m^0.5*s)"},
		{"m^(1/2)", "m^0.5", "m^0.5"},
		{"m^(1/3)", "m^(1/3)", "m^(1/3)"},
		{"m^(1/64)", "m^(1/64)", "m^(1/64)"},
		{"m^-1.5", "1/m^1.5", "1/m^1.5"},
		{"kJ/(kg*K)", "m^2/(s^2*K)", "m^2/(s^2*K) (J/(kg*K))"},
		{"kJ/(kg*degC)", "m^2/(s^2*K)", "m^2/(s^2*K) (J/(kg*K))"},
		{"kJ/kg*K", "m^2*K/s^2", "m^2*K/s^2"},
		{"kWh", "kg*m^2/s^2", "kg*m^2/s^2 (J)"},
		{"hp", "kg*m^2/s^3", "kg*m^2/s^3 (W)"},
		{"W/(m^2*K)", "kg/(s^3*K)", "kg/(s^3*K) (W/(m^2*K))"},
		{"m^3/h", "m^3/s", "m^3/s (volumetric flow)"},
		{"kg/m^3", "kg/m^3", "kg/m^3 (density)"},
		{"1/min", "1/s", "1/s (Hz, a frequency or rate)"},
		{"cP", "kg/(m*s)", "kg/(m*s) (Pa*s)"},
		{"mA*cd", "A*cd", "A*cd"},
		{"kmol/m^3", "mol/m^3", "mol/m^3 (concentration, mol/m^3)"},
		{"%", "", "dimensionless"},
		{"kg/kg", "", "dimensionless"},
		{"", "", "dimensionless"},
	} {
		u, err := Parse(tc.in)
		if err != nil {
			t.Errorf("Parse(%q): %v", tc.in, err)
			continue
		}
		if got := u.Dim.String(); got != tc.str {
			t.Errorf("Parse(%q).Dim.String() = %q, want %q", tc.in, got, tc.str)
		}
		if got := u.Dim.Describe(); got != tc.describe {
			t.Errorf("Parse(%q).Dim.Describe() = %q, want %q", tc.in, got, tc.describe)
		}
	}
}

func TestDimAlgebra(t *testing.T) {
	if Mass().Div(Mass()) != (Dim{}) {
		t.Error("kg/kg is not the zero Dim")
	}
	if !Length().Div(Length()).IsDimensionless() || Length().IsDimensionless() {
		t.Error("IsDimensionless wrong")
	}
	pa := Mass().Div(Length()).Div(Time().Pow(R(2, 1)))
	if pa != MustParse("Pa").Dim {
		t.Errorf("kg/(m*s^2) built = %v, parsed Pa = %v", pa, MustParse("Pa").Dim)
	}
	if got := pa.Pow(R(1, 2)).Pow(R(2, 1)); got != pa {
		t.Errorf("(Pa^0.5)^2 = %v, want %v", got, pa)
	}
	d := NewDim(R(1, 2), Rat{}, R(-1, 1), Rat{}, Rat{Num: 1}, R(0, 3), Rat{})
	want := [7]Rat{{1, 2}, {0, 1}, {-1, 1}, {0, 1}, {1, 1}, {0, 1}, {0, 1}}
	if got := d.Exponents(); got != want {
		t.Errorf("Exponents = %v, want %v", got, want)
	}
	for _, tc := range []struct {
		d    Dim
		want string
	}{
		{Current(), "A"}, {Temperature(), "K"}, {Amount(), "mol"}, {Luminous(), "cd"},
		{Amount().Div(Time()).Div(Length().Pow(R(3, 1))), "mol/(m^3*s)"},
		{Dim{}.Div(Time()), "1/s"},
	} {
		if got := tc.d.String(); got != tc.want {
			t.Errorf("String = %q, want %q", got, tc.want)
		}
	}
}

func TestRat(t *testing.T) {
	for _, tc := range []struct {
		got, want Rat
	}{
		{R(2, -4), Rat{-1, 2}},
		{R(0, -5), Rat{0, 1}},
		{Rat{}.Add(R(1, 2)), Rat{1, 2}},
		{Rat{Num: 2}.Add(Rat{}), Rat{2, 1}},
		{R(1, 2).Add(R(1, 3)), Rat{5, 6}},
		{R(1, 2).Sub(R(1, 2)), Rat{0, 1}},
		{R(2, 3).Mul(R(3, 4)), Rat{1, 2}},
		{R(-2, 3).Mul(Rat{}), Rat{0, 1}},
		{R(3, 7).Neg(), Rat{-3, 7}},
	} {
		if tc.got != tc.want {
			t.Errorf("got %v, want %v", tc.got, tc.want)
		}
	}
	if s := R(-3, 6).String(); s != "-1/2" {
		t.Errorf("String = %q", s)
	}
	if f := R(3, 4).Float64(); f != 0.75 {
		t.Errorf("Float64 = %v", f)
	}
	if !R(4, 2).IsInt() || R(1, 2).IsInt() || !(Rat{}).IsZero() {
		t.Error("IsInt/IsZero wrong")
	}
	func() {
		defer func() {
			if recover() == nil {
				t.Error("R(1, 0) did not panic")
			}
		}()
		R(1, 0)
	}()
	func() {
		defer func() {
			if recover() == nil {
				t.Error("overflow did not panic")
			}
		}()
		R(math.MaxInt/2, 1).Mul(R(4, 1))
	}()
}

func TestText(t *testing.T) {
	for _, tc := range []struct{ in, want string }{
		{"kJ / (kg K)", "kJ/(kg*K)"},
		{" kg/h ", "kg/h"},
		{"m**3", "m^3"},
		{"m³", "m^3"},
		{"m⁻¹", "m^-1"},
		{"m²²", "m^22"},
		{"m^(1/2)", "m^0.5"},
		{"m^(-2/6)", "m^(-1/3)"},
		{"N·m", "N*m"},
		{"1", ""},
		{"%", "%"},
	} {
		if got := MustParse(tc.in).Text; got != tc.want {
			t.Errorf("Parse(%q).Text = %q, want %q", tc.in, got, tc.want)
		}
	}
}

// TestParseError compares the whole error text the user sees.
func TestParseError(t *testing.T) {
	for _, tc := range []struct{ in, want string }{
		{"kg/hh", `unit "kg/hh": col 4: unknown unit "hh"; did you mean "h"?`},
		{"kgg", `unit "kgg": col 1: unknown unit "kgg"; did you mean "kg"?`},
		{"kmole/h", `unit "kmole/h": col 1: unknown unit "kmole"; did you mean "kmol"?`},
		{"KG", `unit "KG": col 1: unknown unit "KG"; did you mean "kg"?`},
		{"Mpa", `unit "Mpa": col 1: unknown unit "Mpa"; did you mean "MPa"?`},
		{"m3/h", `unit "m3/h": col 1: unknown unit "m3"; did you mean "m^3"?`},
		{"deg C", `unit "deg C": col 1: unknown unit "deg"; did you mean "degC", "degF" or "degR"?`},
		{"85 C", `unit "85 C": col 4: unknown unit "C"; did you mean "degC"?`},
		{"xyzzy", `unit "xyzzy": col 1: unknown unit "xyzzy" (known units include kg, m, s, h, mol, K, degC, Pa, bar, J, W; see the units package documentation)`},
		{"kpsi", `unit "kpsi": col 1: SI prefix "k" is not allowed on "psi"; write the number in psi`},
		{"kg/mmin", `unit "kg/mmin": col 4: unknown unit "mmin"; did you mean "min"?`},
		{"kdegC", `unit "kdegC": col 1: SI prefix "k" is not allowed on "degC"; write the number in degC`},
		{"k%", `unit "k%": col 1: unknown unit "k"; did you mean "K"?`},
		{"kg/", `unit "kg/": col 4: missing unit; expected a unit after "/"`},
		{"/h", `unit "/h": col 1: unexpected "/"; expected a unit such as kg, m^3 or 1`},
		{"kg*/h", `unit "kg*/h": col 4: unexpected "/"; expected a unit after "*"`},
		{"(kg", `unit "(kg": col 4: missing ")" to close the "(" at col 1`},
		{"kg)", `unit "kg)": col 3: unexpected ")" with no matching "("`},
		{"kg/()", `unit "kg/()": col 5: empty parentheses; write a unit inside, or "1"`},
		{"m^", `unit "m^": col 3: expected an exponent after "^", as in m^2, m^-1, m^0.5 or m^(1/2)`},
		{"m^x", `unit "m^x": col 3: expected an exponent after "^", as in m^2, m^-1, m^0.5 or m^(1/2)`},
		{"m**", `unit "m**": col 4: expected an exponent after "**", as in m^2, m^-1, m^0.5 or m^(1/2)`},
		{"m^2^3", `unit "m^2^3": col 4: a power of a power needs parentheses, as in (m^2)^3`},
		{"m^1e3", `unit "m^1e3": col 3: exponent 1e3 must be a whole number, a decimal such as 0.5, or a fraction such as (1/2)`},
		{"m^0.33333", `unit "m^0.33333": col 3: exponent 0.33333 has more than 4 decimals; write a fraction such as (1/3)`},
		{"m^(1/0)", `unit "m^(1/0)": col 3: zero denominator in the exponent`},
		{"m^(0.5/2)", `unit "m^(0.5/2)": col 3: a fractional exponent is written with whole numbers, as in (1/2)`},
		{"m^(1/2", `unit "m^(1/2": col 7: missing ")" to close the "(" at col 3`},
		{"m^100", `unit "m^100": col 3: exponent too large (the limit is 99)`},
		{"m^(1/100)", `unit "m^(1/100)": col 6: exponent too large (the limit is 99)`},
		{"((m^99)^99)^99", `unit "((m^99)^99)^99": col 12: the exponents of the dimension grow too large (the limit is 10000)`},
		{"1e300*1e300", `unit "1e300*1e300": col 6: the factor of this unit to SI is out of range`},
		{"0/s", `unit "0/s": col 1: number 0 is out of range for a unit factor`},
		{"-kg", `unit "-kg": col 1: unexpected "-"; a sign may only start an exponent, as in m^-1`},
		{"kg$", `unit "kg$": col 3: unexpected character "$"`},
		{"m¹²³", `unit "m¹²³": col 2: exponent too large (the limit is 99)`},
		{"²m", `unit "²m": col 1: exponent "²" has no unit before it`},
		{"m⁻", `unit "m⁻": col 2: superscript "⁻" needs digits after it, as in m⁻¹`},
		{"µ", `unit "µ": col 1: unknown unit "µ" (known units include kg, m, s, h, mol, K, degC, Pa, bar, J, W; see the units package documentation)`},
	} {
		_, err := Parse(tc.in)
		if err == nil {
			t.Errorf("Parse(%q): no error, want %s", tc.in, tc.want)
			continue
		}
		var ue *Error
		if !errors.As(err, &ue) {
			t.Errorf("Parse(%q): error %T is not *Error", tc.in, err)
		}
		if err.Error() != tc.want {
			t.Errorf("Parse(%q) error:\n got  %s\n want %s", tc.in, err, tc.want)
		}
	}
}

func TestParseTooLong(t *testing.T) {
	s := "m"
	for range MaxInput {
		s += "*m"
	}
	_, err := Parse(s)
	var ue *Error
	if !errors.As(err, &ue) || ue.Col != MaxInput+1 {
		t.Fatalf("Parse(long) = %v, want *Error at col %d", err, MaxInput+1)
	}
}

func TestParseQuantity(t *testing.T) {
	for _, tc := range []struct {
		in      string
		v, si   float64
		text    string
		hasUnit bool
		src     string
	}{
		{"1800 kg/h", 1800, 0.5, "kg/h", true, "1 h = 3600 s, common practice"},
		{"3.2 barg", 3.2, 421325, "barg", true, "absolute = gauge + 101325 Pa, common practice"},
		{"85 degC", 85, 358.15, "degC", true, sp811 + " (T/K = t/C + 273.15)"},
		{"-5e-3 1/s", -5e-3, -5e-3, "1/s", true, "common practice"},
		{"0.95", 0.95, 0.95, "", false, "bare number"},
		{"  +2.5  ", 2.5, 2.5, "", false, "bare number with blanks"},
		{"5kg", 5, 5, "kg", true, "no blank between number and unit"},
		{".5 bar", 0.5, 50000, "bar", true, sp811 + " (bar)"},
		{"50 %", 50, 0.5, "%", true, "percent, common practice"},
		{"1 kJ/(kg*K)", 1, 1000, "kJ/(kg*K)", true, "SI prefix kilo, common practice"},
		{"200 °F", 200, (200 + 459.67) / 1.8, "°F", true, sp811 + " (T/K = (t/F + 459.67)/1.8)"},
	} {
		v, u, has, err := ParseQuantity(tc.in)
		if err != nil {
			t.Errorf("ParseQuantity(%q): %v", tc.in, err)
			continue
		}
		if v != tc.v || u.Text != tc.text || has != tc.hasUnit {
			t.Errorf("ParseQuantity(%q) = %v, %q, %v; want %v, %q, %v", tc.in, v, u.Text, has, tc.v, tc.text, tc.hasUnit)
		}
		if got := u.ToSI(v); !scalar.EqualWithinAbsOrRel(got, tc.si, 1e-12, 1e-14) {
			t.Errorf("ParseQuantity(%q) in SI = %.17g, want %.17g [%s]", tc.in, got, tc.si, tc.src)
		}
	}
}

func TestParseQuantityError(t *testing.T) {
	for _, tc := range []struct{ in, want string }{
		{"", `unit "": col 1: empty quantity; write a number and a unit, as in "1800 kg/h"`},
		{"   ", `unit "   ": col 4: empty quantity; write a number and a unit, as in "1800 kg/h"`},
		{"kg/h", `unit "kg/h": col 1: expected a number first, as in "1800 kg/h" or "0.95"`},
		{"  - 5 kg", `unit "  - 5 kg": col 3: expected a number first, as in "1800 kg/h" or "0.95"`},
		{".", `unit ".": col 1: expected a number first, as in "1800 kg/h" or "0.95"`},
		{"1e999 kg", `unit "1e999 kg": col 1: number 1e999 is out of range`},
		{"1,800 kg/h", `unit "1,800 kg/h": col 2: unexpected character ","; write numbers without separators, as in 1800 or 1.8e3`},
		{"12 kg/hh", `unit "12 kg/hh": col 7: unknown unit "hh"; did you mean "h"?`},
		{"3 (kg", `unit "3 (kg": col 6: missing ")" to close the "(" at col 3`},
		{"85 deg C", `unit "85 deg C": col 4: unknown unit "deg"; did you mean "degC", "degF" or "degR"?`},
		{"2 /h", `unit "2 /h": col 3: unexpected "/"; expected a unit such as kg, m^3 or 1`},
	} {
		_, _, _, err := ParseQuantity(tc.in)
		if err == nil {
			t.Errorf("ParseQuantity(%q): no error, want %s", tc.in, tc.want)
			continue
		}
		if err.Error() != tc.want {
			t.Errorf("ParseQuantity(%q) error:\n got  %s\n want %s", tc.in, err, tc.want)
		}
	}
}

func TestConvert(t *testing.T) {
	for _, tc := range []struct {
		v        float64
		from, to string
		want     float64
		src      string
	}{
		{85, "degC", "degF", 185, sp811 + " (t/C = (t/F - 32)/1.8)"},
		{-40, "degF", "degC", -40, sp811 + " (temperature formulas)"},
		{1800, "kg/h", "kg/s", 0.5, "common practice"},
		{1, "atm", "psi", 14.695948775513449, sp811 + " (atm, psi)"},
		{1, "atm", "torr", 760, sp811 + " (torr = atm/760)"},
		{0, "psig", "barg", 0, "gauge zero is the same atmosphere, common practice"},
		{1, "bar", "barg", 1 - 1.01325, "absolute = gauge + 101325 Pa, common practice"},
		{1, "Btu", "cal", 252.1644, sp811 + " (cross-check 252.164 cal_th)"},
		{1, "bbl", "gal", 42, "US oil barrel = 42 US gal, common practice"},
	} {
		got, err := Convert(tc.v, MustParse(tc.from), MustParse(tc.to))
		if err != nil {
			t.Errorf("Convert(%v, %s, %s): %v", tc.v, tc.from, tc.to, err)
			continue
		}
		if !scalar.EqualWithinAbsOrRel(got, tc.want, 1e-9, 1e-6) {
			t.Errorf("Convert(%v, %s, %s) = %.17g, want %v [%s]", tc.v, tc.from, tc.to, got, tc.want, tc.src)
		}
	}
	_, err := Convert(1, MustParse("kg/h"), MustParse("bar"))
	var me *MismatchError
	if !errors.As(err, &me) {
		t.Fatalf("Convert kg/h -> bar: err = %v, want *MismatchError", err)
	}
	const want = "units: cannot convert kg/h [kg/s (mass flow)] to bar [kg/(m*s^2) (Pa)]: the dimensions differ"
	if err.Error() != want {
		t.Errorf("error = %q, want %q", err, want)
	}
}

func TestMustParsePanics(t *testing.T) {
	defer func() {
		if recover() == nil {
			t.Error("MustParse(\"kgg\") did not panic")
		}
	}()
	MustParse("kgg")
}

func TestZeroUnit(t *testing.T) {
	var u Unit
	if u.ToSI(3) != 3 || u.FromSI(3) != 3 || u.DiffToSI(2) != 2 || u.String() != "1" {
		t.Error("the zero Unit is not dimensionless with scale 1")
	}
}

func TestEditDistance(t *testing.T) {
	for _, tc := range []struct {
		a, b string
		want int
	}{
		{"kg", "kg", 0}, {"kgg", "kg", 1}, {"gk", "kg", 1}, {"", "abc", 3}, {"µm", "um", 1}, {"kmole", "kmol", 1}, {"abc", "xyz", 3},
	} {
		if got := editDistance(tc.a, tc.b); got != tc.want {
			t.Errorf("editDistance(%q, %q) = %d, want %d", tc.a, tc.b, got, tc.want)
		}
	}
}
