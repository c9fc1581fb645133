package units

import (
	"errors"
	"math"
	"testing"
	"unicode/utf8"
)

// FuzzParse checks that Parse never panics, that errors point inside the
// input, and that the normalised Text of a unit parses back to the same unit
// when it is within the input limit.
func FuzzParse(f *testing.F) {
	for _, s := range []string{
		"kg/h", "kJ/(kg*K)", "m^3/h", "Pa^0.5", "m^(1/3)", "1/s", "%", "degC",
		"barg", "kJ/(kg*degC)", "m³", "N·m", "kg**2", "µm", "((m))", "m^-1.25",
		"kg/hh", "(kg", "m^", "1e300*1e300", "m^(-2/6)", "lbf/in^2", "",
	} {
		f.Add(s)
	}
	f.Fuzz(func(t *testing.T, s string) {
		u, err := Parse(s)
		if err != nil {
			var ue *Error
			if !errors.As(err, &ue) {
				t.Fatalf("Parse(%q): error %T is not *Error", s, err)
			}
			if n := utf8.RuneCountInString(ue.Input); ue.Col < 1 || (ue.Col > n+1 && ue.Col != MaxInput+1) {
				t.Fatalf("Parse(%q): col %d outside the input", s, ue.Col)
			}
			return
		}
		if !(u.Scale > 0) || math.IsInf(u.Scale, 0) || math.IsNaN(u.Offset) {
			t.Fatalf("Parse(%q): scale %v offset %v", s, u.Scale, u.Offset)
		}
		_ = u.Dim.String()
		_ = u.Dim.Describe()
		if utf8.RuneCountInString(u.Text) > MaxInput {
			// The limit is on what a user writes; the normalised Text of a
			// long input may exceed it, since products written by
			// juxtaposition gain a "*" ("1%1" becomes "1*%*1"). Nothing
			// parses a Text again, so only Texts within the limit must
			// round-trip.
			return
		}
		v, err := Parse(u.Text)
		if err != nil {
			t.Fatalf("Parse(%q).Text = %q does not parse: %v", s, u.Text, err)
		}
		if v.Dim != u.Dim || v.Offset != u.Offset || math.Abs(v.Scale-u.Scale) > 1e-12*u.Scale {
			t.Fatalf("Parse(%q) = %+v, but its Text %q parses to %+v", s, u, u.Text, v)
		}
	})
}

// FuzzParseQuantity checks that ParseQuantity never panics and that its
// errors point inside the input.
func FuzzParseQuantity(f *testing.F) {
	for _, s := range []string{"1800 kg/h", "3.2 barg", "-5e-3 1/s", "0.95", "1,800 kg", "", "5kg", ".5 bar"} {
		f.Add(s)
	}
	f.Fuzz(func(t *testing.T, s string) {
		v, u, _, err := ParseQuantity(s)
		if err != nil {
			var ue *Error
			if !errors.As(err, &ue) {
				t.Fatalf("ParseQuantity(%q): error %T is not *Error", s, err)
			}
			if n := utf8.RuneCountInString(ue.Input); ue.Col < 1 || (ue.Col > n+1 && ue.Col != MaxInput+1) {
				t.Fatalf("ParseQuantity(%q): col %d outside the input", s, ue.Col)
			}
			return
		}
		if math.IsNaN(v) || !(u.Scale > 0) {
			t.Fatalf("ParseQuantity(%q) = %v, %+v", s, v, u)
		}
	})
}
