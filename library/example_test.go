package library_test

import (
	"fmt"
	"io"
	"strings"

	"github.com/loopwright/loopwright/library"
)

func ExampleIsTemplateRef() {
	for _, arg := range []string{"lib:column", "./lib:column", "plant.yaml"} {
		name, ok := library.IsTemplateRef(arg)
		fmt.Printf("%-13s template=%v name=%q\n", arg, ok, name)
	}
	// Output:
	// lib:column    template=true name="column"
	// ./lib:column  template=false name=""
	// plant.yaml    template=false name=""
}

func ExampleLibrary_List() {
	lib := library.New("") // embedded templates only
	entries, err := lib.List()
	if err != nil {
		fmt.Println(err)
		return
	}
	for _, e := range entries {
		fmt.Printf("%-12s inputs %-16s outputs %s\n", e.Name, strings.Join(e.Inputs, ","), strings.Join(e.Outputs, ","))
	}
	// Output:
	// blender      inputs f_caustic,f_water outputs f_out,w_out
	// column       inputs L,V              outputs yD,xB
	// cstr         inputs qc,q             outputs T,conversion
	// flash        inputs a_V,a_L          outputs P,h
	// flash-constk inputs a_V,a_L          outputs P,h
	// heated-tank  inputs a_feed,a_steam   outputs h,T
}

func ExampleLibrary_Open() {
	lib := library.New("")
	rc, display, err := lib.Open("column")
	if err != nil {
		fmt.Println(err)
		return
	}
	defer rc.Close()
	data, _ := io.ReadAll(rc)
	first, _, _ := strings.Cut(string(data), "\n")
	fmt.Println(display, "|", first)

	_, _, err = lib.Open("colunm")
	fmt.Println(err)
	// Output:
	// lib:column | model: column
	// unknown template "colunm": did you mean lib:column? (available: blender, column, cstr, flash, flash-constk, heated-tank; `library list` shows them)
}

// The normal boiling point of benzene from its primary Antoine set
// (checkvalues §5: 353.253 K [R]; handbook 353.3 K).
func ExampleFindComponent() {
	c, err := library.FindComponent("benzene")
	if err != nil {
		fmt.Println(err)
		return
	}
	a, _ := c.Primary()
	lo, hi := a.Tmin, a.Tmax
	for range 60 {
		mid := (lo + hi) / 2
		if a.Pressure(mid) < 101325 {
			lo = mid
		} else {
			hi = mid
		}
	}
	fmt.Printf("%s (%s, %.3f kg/mol): Tb = %.2f K; %s\n", c.Name, c.Formula, c.MolarMass, lo, a.Source)
	// Output:
	// benzene (C6H6, 0.078 kg/mol): Tb = 353.25 K; NIST Chemistry WebBook, Williamham, Taylor et al. 1945
}
