package model_test

import (
	"fmt"
	"os"
	"strings"

	"github.com/loopwright/loopwright/model"
)

func ExampleLoad() {
	f, err := os.Open("../testdata/models/syrup.yaml")
	if err != nil {
		fmt.Println(err)
		return
	}
	defer f.Close()
	file, err := model.Load("syrup.yaml", f)
	if err != nil {
		model.PrintError(os.Stdout, err)
		return
	}
	sys, err := file.Expand(nil)
	if err != nil {
		model.PrintError(os.Stdout, err)
		return
	}
	fmt.Println(sys.Name, len(sys.Unknowns), "unknowns,", len(sys.Equations), "equations")
	for _, i := range sys.Inputs {
		p := sys.Params[i]
		fmt.Printf("input %s = %g %s (%.6g kg/s)\n", p.Name, p.Unit.FromSI(p.Value), p.Unit.Text, p.Value)
	}
	for _, o := range sys.Outputs {
		fmt.Println("output", o.Name)
	}
	// Output:
	// syrup-dilution 2 unknowns, 2 equations
	// input f_conc = 800 kg/h (0.222222 kg/s)
	// input f_water = 4200 kg/h (1.16667 kg/s)
	// output f_out
	// output s_out
}

func ExampleFile_Expand() {
	file, err := model.LoadFile("../testdata/models/column.yaml")
	if err != nil {
		model.PrintError(os.Stdout, err)
		return
	}
	// Override a constant as from the command line: a 31-stage column
	// fed on stage 16.
	sys, err := file.Expand(&model.ExpandOptions{Constants: map[string]float64{"NT": 31, "NF": 16}})
	if err != nil {
		model.PrintError(os.Stdout, err)
		return
	}
	fmt.Println(len(sys.Unknowns), "unknowns,", len(sys.Equations), "equations")
	fmt.Println(sys.Equations[15].Name, "uses unknowns", sys.Incidence()[15])
	for _, o := range sys.Outputs {
		fmt.Println("output", o.Name)
	}
	// Output:
	// 31 unknowns, 31 equations
	// tray[16] uses unknowns [14 15 16]
	// output top
	// output bottom
}

func ExampleWalk() {
	file, err := model.Load("mix.yaml", strings.NewReader(`model: mix
parameters:
  k: {value: 2, unit: 1/s}
variables:
  c: {unit: mol/m^3, guess: 1}
  r: {unit: mol/(m^3*s)}
equations:
  rate: r = k * c^2 / (1 mol/m^3)
`))
	if err == nil {
		_, err = file.Expand(nil)
	}
	model.PrintError(os.Stdout, err)

	file, _ = model.Load("mix.yaml", strings.NewReader(`model: mix
parameters:
  k: {value: 2, unit: 1/s}
  c0: {value: 1, unit: mol/m^3}
variables:
  c: {unit: mol/m^3, guess: 1}
  r: {unit: mol/(m^3*s)}
equations:
  rate: r = k * c^2 / c0
  feed: c = c0
`))
	sys, _ := file.Expand(nil)
	model.Walk(sys.Equations[0].Residual, func(n model.Node) {
		switch n := n.(type) {
		case *model.Var:
			fmt.Println("unknown", sys.Unknowns[n.Index].Name, "at", n.Pos)
		case *model.Param:
			fmt.Println("parameter", sys.Params[n.Index].Name, "at", n.Pos)
		}
	})
	role, i, _ := sys.Lookup("c0")
	fmt.Println(role, i)
	// Output:
	// mix.yaml:8:26: unexpected token Identifier("mol")
	// unknown r at mix.yaml:9:9
	// parameter k at mix.yaml:9:13
	// unknown c at mix.yaml:9:17
	// parameter c0 at mix.yaml:9:23
	// parameter 1
}
