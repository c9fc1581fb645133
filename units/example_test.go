package units_test

import (
	"fmt"

	"github.com/loopwright/loopwright/units"
)

func ExampleParse() {
	u, err := units.Parse("kJ/(kg*K)")
	if err != nil {
		fmt.Println(err)
		return
	}
	fmt.Println(u.Text, "=", u.Scale, u.Dim)

	// A typing slip is reported at its column, with a suggestion.
	_, err = units.Parse("kg/hh")
	fmt.Println(err)
	// Output:
	// kJ/(kg*K) = 1000 m^2/(s^2*K)
	// unit "kg/hh": col 4: unknown unit "hh"; did you mean "h"?
}

func ExampleParseQuantity() {
	for _, s := range []string{"1800 kg/h", "3.2 barg", "85 degC", "0.95"} {
		v, u, hasUnit, err := units.ParseQuantity(s)
		if err != nil {
			fmt.Println(err)
			continue
		}
		fmt.Printf("%-10s -> %g %s (unit given: %v)\n", s, u.ToSI(v), u.Dim, hasUnit)
	}
	// Output:
	// 1800 kg/h  -> 0.5 kg/s (unit given: true)
	// 3.2 barg   -> 421325 kg/(m*s^2) (unit given: true)
	// 85 degC    -> 358.15 K (unit given: true)
	// 0.95       -> 0.95  (unit given: false)
}

func ExampleUnit_DiffToSI() {
	// An affine unit alone converts absolute values with its offset, and
	// differences (a gain, a span) without it.
	f := units.MustParse("degF")
	fmt.Printf("%.2f K\n", f.ToSI(212))
	fmt.Printf("%.4f K\n", f.DiffToSI(9))
	// Output:
	// 373.15 K
	// 5.0000 K
}

func ExampleConvert() {
	v, err := units.Convert(85, units.MustParse("degC"), units.MustParse("degF"))
	fmt.Printf("%.1f %v\n", v, err)
	_, err = units.Convert(1, units.MustParse("kg/h"), units.MustParse("bar"))
	fmt.Println(err)
	// Output:
	// 185.0 <nil>
	// units: cannot convert kg/h [kg/s (mass flow)] to bar [kg/(m*s^2) (Pa)]: the dimensions differ
}

func ExampleDim_Describe() {
	for _, s := range []string{"bar", "Pa^0.5", "kmol/min", "%"} {
		fmt.Println(units.MustParse(s).Dim.Describe())
	}
	// Output:
	// kg/(m*s^2) (Pa)
	// kg^0.5/(m^0.5*s)
	// mol/s (molar flow)
	// dimensionless
}
