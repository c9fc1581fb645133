package interact

import (
	"math/rand/v2"
	"strings"
	"testing"

	"github.com/loopwright/loopwright/jacobian"
	"github.com/loopwright/loopwright/model"
	"github.com/loopwright/loopwright/solve/sparse"
	"gonum.org/v1/gonum/mat"
)

func denseToCSR(a *mat.Dense) *sparse.CSR {
	r, c := a.Dims()
	s := &sparse.CSR{Rows: r, Cols: c, RowPtr: make([]int, r+1)}
	for i := 0; i < r; i++ {
		for j := 0; j < c; j++ {
			if v := a.At(i, j); v != 0 {
				s.ColIdx = append(s.ColIdx, j)
				s.Val = append(s.Val, v)
			}
		}
		s.RowPtr[i+1] = len(s.ColIdx)
	}
	return s
}

// For a linear model F = A x + B u + E d, y = C x + D u + H d the gains are
// K = D - C A⁻¹ B and Kd = H - C A⁻¹ E (algebra; common practice).
func TestGainsFromJacobianLinear(t *testing.T) {
	rnd := rand.New(rand.NewPCG(11, 11))
	nx, nu, nd, ny := 7, 3, 2, 3
	a := randMatrix(rnd, nx, nx)
	for i := 0; i < nx; i++ {
		a.Set(i, i, a.At(i, i)+5)
		a.Set(i, (i+3)%nx, 0) // some structural zeros for the sparse path
	}
	b, e := randMatrix(rnd, nx, nu), randMatrix(rnd, nx, nd)
	c, d, h := randMatrix(rnd, ny, nx), randMatrix(rnd, ny, nu), randMatrix(rnd, ny, nd)
	var ainv, wantK, wantKd, tmp mat.Dense
	if err := ainv.Inverse(a); err != nil {
		t.Fatal(err)
	}
	tmp.Mul(c, &ainv)
	wantK.Mul(&tmp, b)
	wantK.Sub(d, &wantK)
	wantKd.Mul(&tmp, e)
	wantKd.Sub(h, &wantKd)

	ds, err := DenseSolver(a)
	if err != nil {
		t.Fatal(err)
	}
	ss, err := SparseSolver(denseToCSR(a))
	if err != nil {
		t.Fatal(err)
	}
	for name, s := range map[string]Solver{"dense": ds, "sparse": ss} {
		k, kd, err := GainsFromJacobian(s, b, e, c, d, h)
		if err != nil {
			t.Fatal(err)
		}
		if !mat.EqualApprox(k, &wantK, 1e-10) || !mat.EqualApprox(kd, &wantKd, 1e-10) {
			t.Errorf("%s: K or Kd differ from D - C A⁻¹ B", name)
		}
		k2, kd2, err := GainsFromJacobian(s, b, nil, c, nil, nil)
		if err != nil || kd2 != nil {
			t.Fatal(err, kd2)
		}
		var want2 mat.Dense
		want2.Sub(&wantK, d)
		if !mat.EqualApprox(k2, &want2, 1e-10) {
			t.Errorf("%s: K without Gu wrong", name)
		}
	}
	if _, err := DenseSolver(mat.NewDense(2, 2, []float64{1, 2, 2, 4})); err == nil {
		t.Error("DenseSolver of a singular matrix: no error")
	}
}

// blendSystem is an invented in-line blending model: a pure-solute stream f1
// and a solute-free stream f2 mix into F with solute fraction s.
//
//	total:  F - (f1 + f2) = 0
//	solute: s·F - f1 = 0
//
// outputs F (kg/s) and s (shown in %, Scale 0.01).
func blendSystem() *model.System {
	pos := model.Pos{File: "blend.yaml", Line: 1, Col: 1}
	x0 := &model.Var{Index: 0, Pos: pos}
	x1 := &model.Var{Index: 1, Pos: pos}
	p0 := &model.Param{Index: 0, Pos: pos}
	p1 := &model.Param{Index: 1, Pos: pos}
	kgs := model.Unit{Text: "kg/s", Dim: "kg/s", Scale: 1}
	pct := model.Unit{Text: "%", Scale: 0.01}
	return &model.System{
		Name: "blend", File: "blend.yaml",
		Unknowns: []model.Symbol{
			{Name: "F", Role: model.RoleUnknown, Value: 1, Unit: kgs, Pos: model.Pos{File: "blend.yaml", Line: 3, Col: 3}},
			{Name: "s", Role: model.RoleUnknown, Value: 0.5, Pos: model.Pos{File: "blend.yaml", Line: 4, Col: 3}},
		},
		Params: []model.Symbol{
			{Name: "f1", Role: model.RoleInput, Value: 0.6, Span: 0.2, Unit: kgs},
			{Name: "f2", Role: model.RoleInput, Value: 1.4, Span: 0.5, Unit: kgs},
		},
		Inputs: []int{0, 1},
		Equations: []model.Equation{
			{Name: "total", Residual: &model.Binary{Op: model.OpSub, L: x0, R: &model.Binary{Op: model.OpAdd, L: p0, R: p1}}},
			{Name: "solute", Residual: &model.Binary{Op: model.OpSub, L: &model.Binary{Op: model.OpMul, L: x1, R: x0}, R: p0}},
		},
		Outputs: []model.Output{
			{Name: "F", Expr: x0, Unit: kgs, Span: 0.5},
			{Name: "s", Expr: x1, Unit: pct, Span: 0.05},
		},
	}
}

func TestGainsFromModel(t *testing.T) {
	sys := blendSystem()
	prog, err := jacobian.Compile(sys)
	if err != nil {
		t.Fatal(err)
	}
	p := []float64{0.6, 1.4}
	x := []float64{2, 0.3} // the solution: F = 2, s = 0.3
	g, err := Gains(prog, sys, x, p)
	if err != nil {
		t.Fatal(err)
	}
	// Analytic gains: dF/df = 1, ds/df1 = (1-s)/F, ds/df2 = -s/F, s shown in %
	// (checkvalues §3 derivation [R]).
	want := mat.NewDense(2, 2, []float64{1, 1, 100 * 0.7 / 2, -100 * 0.3 / 2})
	if !mat.EqualApprox(g.K, want, 1e-12) {
		t.Errorf("K = %v, want %v", mat.Formatted(g.K), mat.Formatted(want))
	}
	if g.Kd != nil || g.Source != "model" {
		t.Errorf("Kd %v source %q", g.Kd, g.Source)
	}
	if o := g.Outputs[1]; o.Unit != "%" || !near(o.Nominal, 30, 1e-12) || !near(o.Span, 5, 1e-12) || o.Scale != 0.01 {
		t.Errorf("output s: %+v", o)
	}
	// λ(F, f1) = f1/F = 0.3 (checkvalues §3 [R]).
	var l mat.Dense
	if err := RGA(&l, g.K); err != nil || !near(l.At(0, 0), 0.3, 1e-12) {
		t.Errorf("λ(F,f1) = %g (%v), want 0.3", l.At(0, 0), err)
	}
}

func TestGainsSingularNamesUnknown(t *testing.T) {
	sys := blendSystem()
	prog, err := jacobian.Compile(sys)
	if err != nil {
		t.Fatal(err)
	}
	// At F = 0 the solute equation s·F - f1 no longer depends on s.
	_, err = Gains(prog, sys, []float64{0, 0.3}, []float64{0.6, 1.4})
	if err == nil || !strings.Contains(err.Error(), `blend.yaml:4:3: dF/dx is singular at unknown "s"`) {
		t.Errorf("err = %v", err)
	}
}
