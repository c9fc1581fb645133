package jacobian

import (
	"testing"

	"gonum.org/v1/gonum/mat"

	"github.com/loopwright/loopwright/model"
)

var sinkErr error

func benchSetup(b *testing.B, sys *model.System) (*Program, *Eval, []float64, []float64) {
	prog := mustCompile(b, sys)
	x, p := guess(sys)
	return prog, prog.NewEval(), x, p
}

func residualBench(b *testing.B, sys *model.System) {
	prog, e, x, p := benchSetup(b, sys)
	f := make([]float64, prog.NumEquations())
	b.ReportAllocs()
	for b.Loop() {
		sinkErr = e.Residual(f, x, p)
	}
}

func jacobianBench(b *testing.B, sys *model.System) {
	prog, e, x, p := benchSetup(b, sys)
	jac := prog.NewJacobian()
	b.ReportAllocs()
	for b.Loop() {
		sinkErr = e.Jacobian(jac, x, p)
	}
}

func residualJacobianBench(b *testing.B, sys *model.System) {
	prog, e, x, p := benchSetup(b, sys)
	f := make([]float64, prog.NumEquations())
	jac := prog.NewJacobian()
	b.ReportAllocs()
	for b.Loop() {
		sinkErr = e.ResidualJacobian(f, jac, x, p)
	}
}

func paramJacobianBench(b *testing.B, sys *model.System) {
	prog, e, x, p := benchSetup(b, sys)
	dst := mat.NewDense(prog.NumEquations(), len(sys.Inputs), nil)
	b.ReportAllocs()
	for b.Loop() {
		sinkErr = e.ParamJacobian(dst, x, p, sys.Inputs)
	}
}

func outputGradientsBench(b *testing.B, sys *model.System) {
	prog, e, x, p := benchSetup(b, sys)
	dx := mat.NewDense(prog.NumOutputs(), prog.NumUnknowns(), nil)
	dp := mat.NewDense(prog.NumOutputs(), len(sys.Inputs), nil)
	b.ReportAllocs()
	for b.Loop() {
		sinkErr = e.OutputGradients(dx, dp, x, p, sys.Inputs)
	}
}

func compileBench(b *testing.B, sys *model.System) {
	b.ReportAllocs()
	for b.Loop() {
		_, sinkErr = Compile(sys)
	}
}

func BenchmarkResidualColumn41(b *testing.B)         { residualBench(b, binaryColumn(41, 21)) }
func BenchmarkJacobianColumn41(b *testing.B)         { jacobianBench(b, binaryColumn(41, 21)) }
func BenchmarkResidualJacobianColumn41(b *testing.B) { residualJacobianBench(b, binaryColumn(41, 21)) }
func BenchmarkParamJacobianColumn41(b *testing.B)    { paramJacobianBench(b, binaryColumn(41, 21)) }
func BenchmarkCompileColumn41(b *testing.B)          { compileBench(b, binaryColumn(41, 21)) }
func BenchmarkOutputGradientsColumn41(b *testing.B) {
	outputGradientsBench(b, binaryColumn(41, 21))
}

func BenchmarkResidualColumn200x4(b *testing.B) { residualBench(b, multiColumn(200, 100)) }
func BenchmarkJacobianColumn200x4(b *testing.B) { jacobianBench(b, multiColumn(200, 100)) }
func BenchmarkResidualJacobianColumn200x4(b *testing.B) {
	residualJacobianBench(b, multiColumn(200, 100))
}
func BenchmarkParamJacobianColumn200x4(b *testing.B) { paramJacobianBench(b, multiColumn(200, 100)) }
func BenchmarkCompileColumn200x4(b *testing.B)       { compileBench(b, multiColumn(200, 100)) }
func BenchmarkOutputGradientsColumn200x4(b *testing.B) {
	outputGradientsBench(b, multiColumn(200, 100))
}

// templateSystem loads and expands a library template, as models_test.go
// does, for benchmarks on the real model files (whose equations use defines).
func templateSystem(b *testing.B, name string) *model.System {
	f, err := model.LoadFile("../library/templates/" + name)
	if err != nil {
		b.Fatalf("load: %v", err)
	}
	sys, err := f.Expand(nil)
	if err != nil {
		b.Fatalf("expand: %v", err)
	}
	return sys
}

func BenchmarkResidualTemplateColumn(b *testing.B) {
	residualBench(b, templateSystem(b, "column.yaml"))
}
func BenchmarkJacobianTemplateColumn(b *testing.B) {
	jacobianBench(b, templateSystem(b, "column.yaml"))
}
func BenchmarkResidualJacobianTemplateColumn(b *testing.B) {
	residualJacobianBench(b, templateSystem(b, "column.yaml"))
}
func BenchmarkParamJacobianTemplateColumn(b *testing.B) {
	paramJacobianBench(b, templateSystem(b, "column.yaml"))
}

// The syrup blender (testdata/models/syrup.yaml: 2 unknowns, 2 outputs, 2
// inputs) as the envelope sweep evaluates it at each point: dF/dp for the
// inputs and then the sweep axes (s_conc, f_conc, as the sweep's benchmark
// lays them out), the output gradients for the inputs, the residual with
// dF/dx for the solver, and the outputs. Each benchmark alternates between
// two points (the second 0.1 % off the guess in x and in p), so that no
// call finds the values of the last at its point; BenchmarkSweepPointSyrup
// makes the calls of one point in the sweep's order.
func syrupSetup(b *testing.B) (*model.System, *Program, *Eval, [2][]float64, [2][]float64, []int) {
	f, err := model.LoadFile("../testdata/models/syrup.yaml")
	if err != nil {
		b.Fatalf("load: %v", err)
	}
	sys, err := f.Expand(nil)
	if err != nil {
		b.Fatalf("expand: %v", err)
	}
	prog, e, x, p := benchSetup(b, sys)
	_, ks, ok1 := sys.Lookup("s_conc")
	_, kf, ok2 := sys.Lookup("f_conc")
	if !ok1 || !ok2 {
		b.Fatal("syrup.yaml: s_conc or f_conc missing")
	}
	cols := append(append([]int(nil), sys.Inputs...), ks, kf)
	x2, p2 := make([]float64, len(x)), make([]float64, len(p))
	for i, v := range x {
		x2[i] = v * 1.001
	}
	for i, v := range p {
		p2[i] = v * 1.001
	}
	return sys, prog, e, [2][]float64{x, x2}, [2][]float64{p, p2}, cols
}

func BenchmarkParamJacobianSyrup(b *testing.B) {
	_, prog, e, x, p, cols := syrupSetup(b)
	dst := mat.NewDense(prog.NumEquations(), len(cols), nil)
	b.ReportAllocs()
	i := 0
	for b.Loop() {
		sinkErr = e.ParamJacobian(dst, x[i], p[i], cols)
		i ^= 1
	}
}

func BenchmarkOutputGradientsSyrup(b *testing.B) {
	sys, prog, e, x, p, _ := syrupSetup(b)
	dx := mat.NewDense(prog.NumOutputs(), prog.NumUnknowns(), nil)
	dp := mat.NewDense(prog.NumOutputs(), len(sys.Inputs), nil)
	b.ReportAllocs()
	i := 0
	for b.Loop() {
		sinkErr = e.OutputGradients(dx, dp, x[i], p[i], sys.Inputs)
		i ^= 1
	}
}

func BenchmarkResidualJacobianSyrup(b *testing.B) {
	_, prog, e, x, p, _ := syrupSetup(b)
	f := make([]float64, prog.NumEquations())
	jac := prog.NewJacobian()
	b.ReportAllocs()
	i := 0
	for b.Loop() {
		sinkErr = e.ResidualJacobian(f, jac, x[i], p[i])
		i ^= 1
	}
}

func BenchmarkResidualSyrup(b *testing.B) {
	_, prog, e, x, p, _ := syrupSetup(b)
	f := make([]float64, prog.NumEquations())
	b.ReportAllocs()
	i := 0
	for b.Loop() {
		sinkErr = e.Residual(f, x[i], p[i])
		i ^= 1
	}
}

func BenchmarkOutputsSyrup(b *testing.B) {
	_, prog, e, x, p, _ := syrupSetup(b)
	y := make([]float64, prog.NumOutputs())
	b.ReportAllocs()
	i := 0
	for b.Loop() {
		sinkErr = e.Outputs(y, x[i], p[i])
		i ^= 1
	}
}

// BenchmarkSweepPointSyrup is the sequence of evaluations the sweep makes
// at a point once it is solved: the solver's last residual and dF/dx, then
// dF/dp, the output gradients and the outputs, at one (x, p).
func BenchmarkSweepPointSyrup(b *testing.B) {
	sys, prog, e, x, p, cols := syrupSetup(b)
	f := make([]float64, prog.NumEquations())
	jac := prog.NewJacobian()
	fp := mat.NewDense(prog.NumEquations(), len(cols), nil)
	dx := mat.NewDense(prog.NumOutputs(), prog.NumUnknowns(), nil)
	dp := mat.NewDense(prog.NumOutputs(), len(sys.Inputs), nil)
	y := make([]float64, prog.NumOutputs())
	b.ReportAllocs()
	i := 0
	for b.Loop() {
		sinkErr = e.ResidualJacobian(f, jac, x[i], p[i])
		sinkErr = e.ParamJacobian(fp, x[i], p[i], cols)
		sinkErr = e.OutputGradients(dx, dp, x[i], p[i], sys.Inputs)
		sinkErr = e.Outputs(y, x[i], p[i])
		i ^= 1
	}
}
