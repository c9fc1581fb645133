package jacobian_test

import (
	"fmt"

	"gonum.org/v1/gonum/mat"

	"github.com/loopwright/loopwright/jacobian"
	"github.com/loopwright/loopwright/model"
)

// blender is the syrup dilution of the model-format example (an invented
// scenario), expanded by hand the way the model loader would:
//
//	total: f_out = f_conc + f_water
//	sugar: f_out * s_out = f_conc * s_conc + f_water * s_water
//
// Unknowns f_out [kg/s], s_out; parameters s_conc, s_water, f_conc, f_water.
func blender() *model.System {
	pos := func(col int) model.Pos { return model.Pos{File: "syrup.yaml", Line: 18, Col: col} }
	x := func(i int) model.Node { return &model.Var{Index: i} }
	p := func(i int) model.Node { return &model.Param{Index: i} }
	bin := func(op model.Op, l, r model.Node) model.Node { return &model.Binary{Op: op, L: l, R: r} }
	return &model.System{
		Name:     "syrup-dilution",
		Unknowns: []model.Symbol{{Name: "f_out", Value: 1}, {Name: "s_out", Value: 0.1}},
		Params: []model.Symbol{
			{Name: "s_conc", Value: 0.65}, {Name: "s_water", Value: 0},
			{Name: "f_conc", Value: 800.0 / 3600}, {Name: "f_water", Value: 4200.0 / 3600},
		},
		Equations: []model.Equation{
			{Name: "total", Pos: pos(10), Residual: bin(model.OpSub, x(0), bin(model.OpAdd, p(2), p(3)))},
			{Name: "sugar", Pos: pos(10), Residual: bin(model.OpSub,
				bin(model.OpMul, x(0), x(1)),
				bin(model.OpAdd, bin(model.OpMul, p(2), p(0)), bin(model.OpMul, p(3), p(1))))},
		},
		Outputs: []model.Output{{Name: "s_out", Expr: x(1)}},
	}
}

func ExampleCompile() {
	prog, err := jacobian.Compile(blender())
	if err != nil {
		fmt.Println(err)
		return
	}
	fmt.Println("equations:", prog.NumEquations(), "unknowns:", prog.NumUnknowns(), "parameters:", prog.NumParams())
	pat := prog.Pattern()
	fmt.Printf("pattern of dF/dx:\n%v\n", mat.Formatted(pat.Dense()))
	// Output:
	// equations: 2 unknowns: 2 parameters: 4
	// pattern of dF/dx:
	// ⎡1  0⎤
	// ⎣1  1⎦
}

func ExampleEval_Residual() {
	prog, err := jacobian.Compile(blender())
	if err != nil {
		fmt.Println(err)
		return
	}
	e := prog.NewEval()
	x := []float64{5000.0 / 3600, 0.104}                 // f_out [kg/s], s_out
	p := []float64{0.65, 0, 800.0 / 3600, 4200.0 / 3600} // s_conc, s_water, f_conc, f_water
	f := make([]float64, prog.NumEquations())
	if err := e.Residual(f, x, p); err != nil {
		fmt.Println(err)
		return
	}
	fmt.Printf("F = [%.3g %.3g]\n", f[0], f[1])
	// Output:
	// F = [0 0]
}

func ExampleEvalError() {
	// sugar: log(s_out) = -2.3, with log at line 31, column 18 of the file.
	sys := &model.System{
		Unknowns: []model.Symbol{{Name: "s_out"}},
		Equations: []model.Equation{{Name: "sugar", Residual: &model.Binary{
			Op: model.OpSub,
			L: &model.Call{Pos: model.Pos{File: "model.yaml", Line: 31, Col: 18}, Fn: model.FnLog,
				Args: []model.Node{&model.Var{Index: 0}}},
			R: &model.Const{Value: -2.3},
		}}},
	}
	prog, err := jacobian.Compile(sys)
	if err != nil {
		fmt.Println(err)
		return
	}
	f := make([]float64, 1)
	err = prog.NewEval().Residual(f, []float64{-0.2}, nil)
	fmt.Println(err)
	// Output:
	// model.yaml:31:18: log of a non-positive value (-0.2) in equation "sugar"
}

func ExampleEval_Jacobian() {
	prog, err := jacobian.Compile(blender())
	if err != nil {
		fmt.Println(err)
		return
	}
	e := prog.NewEval()
	x := []float64{1.5, 0.1}
	p := []float64{0.65, 0, 0.25, 1.25}
	jac := prog.NewJacobian()
	if err := e.Jacobian(jac, x, p); err != nil {
		fmt.Println(err)
		return
	}
	fmt.Printf("dF/dx =\n%v\n", mat.Formatted(jac.Dense()))

	// dF/du for the inputs f_conc and f_water (parameters 2 and 3).
	du := mat.NewDense(prog.NumEquations(), 2, nil)
	if err := e.ParamJacobian(du, x, p, []int{2, 3}); err != nil {
		fmt.Println(err)
		return
	}
	fmt.Printf("dF/du =\n%v\n", mat.Formatted(du))
	// Output:
	// dF/dx =
	// ⎡  1    0⎤
	// ⎣0.1  1.5⎦
	// dF/du =
	// ⎡   -1     -1⎤
	// ⎣-0.65      0⎦
}
