package jacobian

import (
	"errors"
	"fmt"
	"math"
	"math/rand/v2"
	"slices"
	"strings"
	"sync"
	"testing"

	"gonum.org/v1/gonum/diff/fd"
	"gonum.org/v1/gonum/floats"
	"gonum.org/v1/gonum/mat"

	"github.com/loopwright/loopwright/model"
)

// syrup is the blender of model-format.md ("A small example", an invented
// scenario). Unknowns f_out, s_out; parameters s_conc, s_water, f_conc,
// f_water.
func syrup() *model.System {
	b := &builder{file: "syrup.yaml", line: 20}
	sys := &model.System{
		Name:     "syrup-dilution",
		Unknowns: unknowns("f_out", "s_out"),
		Params: []model.Symbol{
			{Name: "s_conc", Value: 0.65, Role: model.RoleDisturbance},
			{Name: "s_water", Value: 0, Role: model.RoleParameter},
			{Name: "f_conc", Value: 800.0 / 3600, Role: model.RoleInput},
			{Name: "f_water", Value: 4200.0 / 3600, Role: model.RoleInput},
		},
		Inputs:       []int{2, 3},
		Disturbances: []int{0},
	}
	sys.Equations = []model.Equation{
		{Name: "total", Pos: b.pos(), Residual: b.sub(b.x(0), b.add(b.p(2), b.p(3)))},
		{Name: "sugar", Pos: b.pos(), Residual: b.sub(b.mul(b.x(0), b.x(1)), b.add(b.mul(b.p(2), b.p(0)), b.mul(b.p(3), b.p(1))))},
	}
	sys.Outputs = []model.Output{{Name: "f_out", Expr: b.x(0)}, {Name: "s_out", Expr: b.x(1)}}
	return sys
}

func mustCompile(t testing.TB, sys *model.System) *Program {
	t.Helper()
	prog, err := Compile(sys)
	if err != nil {
		t.Fatalf("Compile: %v", err)
	}
	return prog
}

func nanDense(r, c int) *mat.Dense {
	d := mat.NewDense(r, c, nil)
	for i := 0; i < r; i++ {
		for j := 0; j < c; j++ {
			d.Set(i, j, math.NaN())
		}
	}
	return d
}

func nanSlice(n int) []float64 {
	s := make([]float64, n)
	for i := range s {
		s[i] = math.NaN()
	}
	return s
}

// close reports whether a and b agree to tol relative to max(|a|, |b|, 1).
func close(a, b, tol float64) bool {
	return math.Abs(a-b) <= tol*max(math.Abs(a), math.Abs(b), 1)
}

func equalApprox(a, b mat.Matrix, tol float64) (i, j int, ok bool) {
	r, c := a.Dims()
	for i := 0; i < r; i++ {
		for j := 0; j < c; j++ {
			if !close(a.At(i, j), b.At(i, j), tol) {
				return i, j, false
			}
		}
	}
	return 0, 0, true
}

func TestSyrupAnalytic(t *testing.T) {
	prog := mustCompile(t, syrup())
	if prog.NumEquations() != 2 || prog.NumUnknowns() != 2 || prog.NumParams() != 4 || prog.NumOutputs() != 2 {
		t.Fatalf("sizes %d %d %d %d", prog.NumEquations(), prog.NumUnknowns(), prog.NumParams(), prog.NumOutputs())
	}
	e := prog.NewEval()
	rnd := rand.New(rand.NewPCG(1, 1))
	for range 10 {
		x := []float64{rnd.Float64() * 2, rnd.Float64()}
		p := []float64{rnd.Float64(), rnd.Float64(), rnd.Float64(), rnd.Float64()}
		xc, pc := slices.Clone(x), slices.Clone(p)
		fout, sout := x[0], x[1]
		sc, sw, fc, fw := p[0], p[1], p[2], p[3]

		f := nanSlice(2)
		jac := prog.NewJacobian()
		copy(jac.Val, nanSlice(len(jac.Val)))
		if err := e.ResidualJacobian(f, jac, x, p); err != nil {
			t.Fatal(err)
		}
		wantF := []float64{fout - (fc + fw), fout*sout - (fc*sc + fw*sw)}
		if !floats.EqualApprox(f, wantF, 1e-15) {
			t.Errorf("residual %v, want %v", f, wantF)
		}
		wantJ := mat.NewDense(2, 2, []float64{1, 0, sout, fout})
		if !mat.Equal(jac.Dense(), wantJ) {
			t.Errorf("J = %v, want %v", mat.Formatted(jac.Dense()), mat.Formatted(wantJ))
		}
		dp := nanDense(2, 3)
		if err := e.ParamJacobian(dp, x, p, []int{3, 0, 2}); err != nil {
			t.Fatal(err)
		}
		wantP := mat.NewDense(2, 3, []float64{-1, 0, -1, -sw, -fc, -sc})
		if !mat.Equal(dp, wantP) {
			t.Errorf("dF/dp = %v, want %v", mat.Formatted(dp), mat.Formatted(wantP))
		}
		dx, dy := nanDense(2, 2), nanDense(2, 1)
		if err := e.OutputGradients(dx, dy, x, p, []int{1}); err != nil {
			t.Fatal(err)
		}
		if !mat.Equal(dx, mat.NewDense(2, 2, []float64{1, 0, 0, 1})) || !mat.Equal(dy, mat.NewDense(2, 1, nil)) {
			t.Errorf("output gradients %v %v", mat.Formatted(dx), mat.Formatted(dy))
		}
		if !slices.Equal(x, xc) || !slices.Equal(p, pc) {
			t.Errorf("x or p modified")
		}
	}
}

// opCase is one expression over unknowns x0, x1 and parameter p0, with its
// gradient (d/dx0, d/dx1, d/dp0) worked out by hand.
type opCase struct {
	name string
	expr func(b *builder) model.Node
	grad func(x0, x1, p0 float64) [3]float64
	ops  int // tape length, when the case checks sharing or folding (0: not checked)
}

var opCases = []opCase{
	{"add", func(b *builder) model.Node { return b.add(b.x(0), b.x(1)) },
		func(x0, x1, p0 float64) [3]float64 { return [3]float64{1, 1, 0} }, 3},
	{"sub", func(b *builder) model.Node { return b.sub(b.x(0), b.p(0)) },
		func(x0, x1, p0 float64) [3]float64 { return [3]float64{1, 0, -1} }, 3},
	{"mul", func(b *builder) model.Node { return b.mul(b.x(0), b.x(1)) },
		func(x0, x1, p0 float64) [3]float64 { return [3]float64{x1, x0, 0} }, 3},
	{"div", func(b *builder) model.Node { return b.div(b.x(0), b.mul(b.x(1), b.p(0))) },
		func(x0, x1, p0 float64) [3]float64 {
			return [3]float64{1 / (x1 * p0), -x0 / (x1 * x1 * p0), -x0 / (x1 * p0 * p0)}
		}, 0},
	{"neg", func(b *builder) model.Node { return b.neg(b.mul(b.x(0), b.p(0))) },
		func(x0, x1, p0 float64) [3]float64 { return [3]float64{-p0, 0, -x0} }, 0},
	{"square", func(b *builder) model.Node { return b.pow(b.x(0), b.num(2)) },
		func(x0, x1, p0 float64) [3]float64 { return [3]float64{2 * x0, 0, 0} }, 2},
	{"constant power", func(b *builder) model.Node { return b.pow(b.x(0), b.num(2.5)) },
		func(x0, x1, p0 float64) [3]float64 { return [3]float64{2.5 * math.Pow(x0, 1.5), 0, 0} }, 2},
	{"negative power", func(b *builder) model.Node { return b.pow(b.x(1), b.neg(b.num(1.5))) },
		func(x0, x1, p0 float64) [3]float64 { return [3]float64{0, -1.5 * math.Pow(x1, -2.5), 0} }, 2},
	{"integer power of a negative base", func(b *builder) model.Node { return b.pow(b.sub(b.x(0), b.num(3)), b.num(3)) },
		func(x0, x1, p0 float64) [3]float64 { return [3]float64{3 * (x0 - 3) * (x0 - 3), 0, 0} }, 0},
	{"variable power", func(b *builder) model.Node { return b.pow(b.x(0), b.x(1)) },
		func(x0, x1, p0 float64) [3]float64 {
			return [3]float64{x1 * math.Pow(x0, x1-1), math.Pow(x0, x1) * math.Log(x0), 0}
		}, 3},
	{"pow call", func(b *builder) model.Node { return b.call(model.FnPow, b.x(0), b.p(0)) },
		func(x0, x1, p0 float64) [3]float64 {
			return [3]float64{p0 * math.Pow(x0, p0-1), 0, math.Pow(x0, p0) * math.Log(x0)}
		}, 3},
	{"constant base", func(b *builder) model.Node { return b.pow(b.num(2), b.x(0)) },
		func(x0, x1, p0 float64) [3]float64 { return [3]float64{math.Exp2(x0) * math.Ln2, 0, 0} }, 3},
	{"power one", func(b *builder) model.Node { return b.pow(b.x(0), b.num(1)) },
		func(x0, x1, p0 float64) [3]float64 { return [3]float64{1, 0, 0} }, 1},
	{"exp", func(b *builder) model.Node { return b.call(model.FnExp, b.mul(b.x(0), b.x(1))) },
		func(x0, x1, p0 float64) [3]float64 { e := math.Exp(x0 * x1); return [3]float64{x1 * e, x0 * e, 0} }, 4},
	{"log", func(b *builder) model.Node { return b.call(model.FnLog, b.x(0)) },
		func(x0, x1, p0 float64) [3]float64 { return [3]float64{1 / x0, 0, 0} }, 2},
	{"log10", func(b *builder) model.Node { return b.call(model.FnLog10, b.mul(b.x(0), b.p(0))) },
		func(x0, x1, p0 float64) [3]float64 {
			return [3]float64{1 / (x0 * math.Ln10), 0, 1 / (p0 * math.Ln10)}
		}, 4},
	{"sqrt", func(b *builder) model.Node { return b.call(model.FnSqrt, b.add(b.x(0), b.x(1))) },
		func(x0, x1, p0 float64) [3]float64 { d := 0.5 / math.Sqrt(x0+x1); return [3]float64{d, d, 0} }, 4},
	{"abs", func(b *builder) model.Node { return b.call(model.FnAbs, b.sub(b.x(0), b.x(1))) },
		func(x0, x1, p0 float64) [3]float64 {
			s := math.Copysign(1, x0-x1)
			return [3]float64{s, -s, 0}
		}, 4},
	{"min of three", func(b *builder) model.Node { return b.call(model.FnMin, b.x(0), b.x(1), b.p(0)) },
		func(x0, x1, p0 float64) [3]float64 {
			switch m := min(x0, x1, p0); m {
			case x0:
				return [3]float64{1, 0, 0}
			case x1:
				return [3]float64{0, 1, 0}
			}
			return [3]float64{0, 0, 1}
		}, 5},
	{"max", func(b *builder) model.Node { return b.call(model.FnMax, b.x(0), b.mul(b.x(1), b.p(0))) },
		func(x0, x1, p0 float64) [3]float64 {
			if x0 >= x1*p0 {
				return [3]float64{1, 0, 0}
			}
			return [3]float64{0, p0, x1}
		}, 0},
	{"shared subtree", func(b *builder) model.Node {
		s := b.mul(b.x(0), b.x(1)) // one node used three times: computed once
		return b.add(b.mul(s, s), b.call(model.FnLog, s))
	}, func(x0, x1, p0 float64) [3]float64 {
		s := x0 * x1
		d := 2*s + 1/s
		return [3]float64{d * x1, d * x0, 0}
	}, 6},
	{"constant folding", func(b *builder) model.Node {
		return b.add(b.mul(b.mul(b.num(2), b.num(3)), b.x(0)), b.call(model.FnLog, b.num(10)))
	}, func(x0, x1, p0 float64) [3]float64 { return [3]float64{6, 0, 0} }, 5},
	{"identities", func(b *builder) model.Node {
		// ((0 + x0*1) - 0)/1 + 0 is x0 with no arithmetic left.
		return b.add(b.div(b.sub(b.add(b.num(0), b.mul(b.x(0), b.num(1))), b.num(0)), b.num(1)), b.num(0))
	}, func(x0, x1, p0 float64) [3]float64 { return [3]float64{1, 0, 0} }, 1},
	{"same unknown twice", func(b *builder) model.Node { return b.sub(b.mul(b.x(0), b.p(0)), b.x(0)) },
		func(x0, x1, p0 float64) [3]float64 { return [3]float64{p0 - 1, 0, x0} }, 4},
}

func opSystem(c opCase) *model.System {
	b := &builder{file: "ops.yaml", line: 1}
	return &model.System{
		Unknowns:  unknowns("x0", "x1"),
		Params:    []model.Symbol{{Name: "p0", Value: 1}},
		Equations: []model.Equation{{Name: c.name, Residual: c.expr(b)}},
		Outputs:   []model.Output{{Name: c.name, Expr: c.expr(b)}},
		Defines:   []model.Output{{Name: c.name, Expr: c.expr(b)}},
		Checks:    []model.Check{{Name: c.name, Expr: c.expr(b)}},
	}
}

func TestOps(t *testing.T) {
	for _, c := range opCases {
		t.Run(c.name, func(t *testing.T) {
			prog := mustCompile(t, opSystem(c))
			if c.ops != 0 && len(prog.eqs[0].ops) != c.ops {
				t.Errorf("tape has %d ops, want %d", len(prog.eqs[0].ops), c.ops)
			}
			e := prog.NewEval()
			rnd := rand.New(rand.NewPCG(1, 1))
			jac := prog.NewJacobian()
			for range 20 {
				x := []float64{0.5 + 1.5*rnd.Float64(), 0.5 + 1.5*rnd.Float64()}
				p := []float64{0.5 + 1.5*rnd.Float64()}
				want := c.grad(x[0], x[1], p[0])

				copy(jac.Val, nanSlice(len(jac.Val)))
				if err := e.Jacobian(jac, x, p); err != nil {
					t.Fatal(err)
				}
				dp := nanDense(1, 1)
				if err := e.ParamJacobian(dp, x, p, []int{0}); err != nil {
					t.Fatal(err)
				}
				got := [3]float64{jac.At(0, 0), jac.At(0, 1), dp.At(0, 0)}
				for k := range got {
					if !close(got[k], want[k], 1e-13) {
						t.Errorf("at x=%v p=%v: AD gradient %v, hand-worked %v", x, p, got, want)
						break
					}
				}

				// Central differences on (x0, x1, p0) as an independent oracle.
				z := []float64{x[0], x[1], p[0]}
				num := mat.NewDense(1, 3, nil)
				fd.Jacobian(num, func(y, z []float64) {
					if err := e.Residual(y, z[:2], z[2:]); err != nil {
						t.Fatal(err)
					}
				}, z, &fd.JacobianSettings{Formula: fd.Central})
				for k := range got {
					if !close(got[k], num.At(0, k), 1e-6) {
						t.Errorf("at z=%v: AD %v, central differences %v", z, got, num.RawRowView(0))
						break
					}
				}

				// Outputs, defines and checks are compiled the same way.
				var out, def, chk, res [1]float64
				dx := nanDense(1, 2)
				if err := errors.Join(e.Outputs(out[:], x, p), e.Defines(def[:], x, p), e.Checks(chk[:], x, p),
					e.Residual(res[:], x, p), e.OutputGradients(dx, nil, x, p, nil)); err != nil {
					t.Fatal(err)
				}
				if out != res || def != res || chk != res {
					t.Errorf("output %v, define %v, check %v, residual %v", out, def, chk, res)
				}
				if dx.At(0, 0) != got[0] || dx.At(0, 1) != got[1] {
					t.Errorf("output gradient %v, residual gradient %v", dx.RawRowView(0), got[:2])
				}
			}
		})
	}
}

// scaledFD is gonum's central-difference Jacobian taken in the variables
// z_j/s_j with s_j = max(|z_j|, 1), so that its fixed step suits SI values of
// any magnitude (a pressure of 1e5 Pa as well as a mole fraction).
func scaledFD(dst *mat.Dense, f func(y, z []float64), z []float64) {
	s := make([]float64, len(z))
	u := make([]float64, len(z))
	for j := range z {
		s[j] = max(math.Abs(z[j]), 1)
		u[j] = z[j] / s[j]
	}
	w := make([]float64, len(z))
	fd.Jacobian(dst, func(y, u []float64) {
		for j := range u {
			w[j] = u[j] * s[j]
		}
		f(y, w)
	}, u, &fd.JacobianSettings{Formula: fd.Central})
	r, _ := dst.Dims()
	for i := 0; i < r; i++ {
		for j := range z {
			dst.Set(i, j, dst.At(i, j)/s[j])
		}
	}
}

// checkAgainstFD compares every derivative the Program computes with central
// differences (gonum's fd.Jacobian and the package's own JacobianFD) at
// (x, p).
func checkAgainstFD(t *testing.T, prog *Program, x, p []float64, tol float64) {
	t.Helper()
	e := prog.NewEval()
	m, n, np := prog.NumEquations(), prog.NumUnknowns(), prog.NumParams()
	xc, pc := slices.Clone(x), slices.Clone(p)

	jac := prog.NewJacobian()
	copy(jac.Val, nanSlice(len(jac.Val)))
	f := nanSlice(m)
	if err := e.ResidualJacobian(f, jac, x, p); err != nil {
		t.Fatal(err)
	}
	ad := jac.Dense()
	want := nanSlice(m)
	if err := e.Residual(want, x, p); err != nil {
		t.Fatal(err)
	}
	if !slices.Equal(f, want) {
		t.Errorf("ResidualJacobian residual differs from Residual")
	}

	num := mat.NewDense(m, n, nil)
	scaledFD(num, func(y, z []float64) {
		if err := e.Residual(y, z, p); err != nil {
			t.Fatal(err)
		}
	}, x)
	if i, j, ok := equalApprox(ad, num, tol); !ok {
		t.Errorf("dF/dx[%d,%d]: AD %g, fd.Central %g", i, j, ad.At(i, j), num.At(i, j))
	}
	own := nanDense(m, n)
	if err := e.JacobianFD(own, x, p); err != nil {
		t.Fatal(err)
	}
	if i, j, ok := equalApprox(ad, own, tol); !ok {
		t.Errorf("dF/dx[%d,%d]: AD %g, JacobianFD %g", i, j, ad.At(i, j), own.At(i, j))
	}

	cols := make([]int, np)
	for k := range cols {
		cols[k] = np - 1 - k // reversed, to check the column mapping
	}
	adp := nanDense(m, np)
	if err := e.ParamJacobian(adp, x, p, cols); err != nil {
		t.Fatal(err)
	}
	nump := nanDense(m, np)
	if err := e.ParamJacobianFD(nump, x, p, cols); err != nil {
		t.Fatal(err)
	}
	if i, j, ok := equalApprox(adp, nump, tol); !ok {
		t.Errorf("dF/dp[%d,%d]: AD %g, ParamJacobianFD %g", i, j, adp.At(i, j), nump.At(i, j))
	}

	if nout := prog.NumOutputs(); nout > 0 {
		dx, dp := nanDense(nout, n), nanDense(nout, np)
		if err := e.OutputGradients(dx, dp, x, p, cols); err != nil {
			t.Fatal(err)
		}
		z := append(slices.Clone(x), p...)
		numo := mat.NewDense(nout, n+np, nil)
		scaledFD(numo, func(y, z []float64) {
			if err := e.Outputs(y, z[:n], z[n:]); err != nil {
				t.Fatal(err)
			}
		}, z)
		if i, j, ok := equalApprox(dx, numo.Slice(0, nout, 0, n), tol); !ok {
			t.Errorf("dy/dx[%d,%d]: AD %g, fd.Central %g", i, j, dx.At(i, j), numo.At(i, j))
		}
		for k, c := range cols {
			for i := 0; i < nout; i++ {
				if !close(dp.At(i, k), numo.At(i, n+c), tol) {
					t.Errorf("dy/dp[%d,%d]: AD %g, fd.Central %g", i, c, dp.At(i, k), numo.At(i, n+c))
				}
			}
		}
	}
	if !slices.Equal(x, xc) || !slices.Equal(p, pc) {
		t.Errorf("x or p modified")
	}
}

func TestADAgainstFD(t *testing.T) {
	rnd := rand.New(rand.NewPCG(1, 1))
	for _, tc := range []struct {
		name string
		sys  *model.System
		lo   float64 // range of the random unknowns
		hi   float64
	}{
		{"syrup", syrup(), 0.1, 1},
		{"binary column 41", binaryColumn(41, 21), 0.01, 0.99},
		{"four-component column 12", multiColumn(12, 6), 0.05, 0.3},
	} {
		t.Run(tc.name, func(t *testing.T) {
			prog := mustCompile(t, tc.sys)
			x, p := guess(tc.sys)
			checkAgainstFD(t, prog, x, p, 1e-6)
			for range 3 {
				for i := range x {
					x[i] = tc.lo + (tc.hi-tc.lo)*rnd.Float64()
				}
				for i := range p {
					p[i] = tc.sys.Params[i].Value * (0.9 + 0.2*rnd.Float64())
				}
				checkAgainstFD(t, prog, x, p, 1e-6)
			}
		})
	}
}

func TestColumnPattern(t *testing.T) {
	prog := mustCompile(t, binaryColumn(41, 21))
	pat := prog.Pattern()
	if pat.Val != nil {
		t.Errorf("pattern has values")
	}
	if got, want := pat.NNZ(), 3*41-2; got != want {
		t.Errorf("nnz = %d, want %d (tridiagonal)", got, want)
	}
	for i := 0; i < 41; i++ {
		cols, _ := pat.Row(i)
		var want []int
		for j := max(i-1, 0); j <= min(i+1, 40); j++ {
			want = append(want, j)
		}
		if !slices.Equal(cols, want) {
			t.Errorf("row %d: columns %v, want %v", i, cols, want)
		}
	}
	// Pattern returns a copy: changing it leaves the program alone.
	pat.ColIdx[0] = 7
	if prog.Pattern().ColIdx[0] != 0 {
		t.Errorf("Pattern shares storage with the program")
	}
}

// TestColumnNewton solves the 41-stage column with Newton's method on the AD
// Jacobian and compares the product compositions with the recomputed column A
// values: checkvalues.md §2d [R], row "L=2.706, V=3.206: yD = 0.989996,
// xB = 0.010004" (column data from COLA / SP Sec. 12.4, §2a [V]).
func TestColumnNewton(t *testing.T) {
	sys := binaryColumn(41, 21)
	prog := mustCompile(t, sys)
	e := prog.NewEval()
	x, p := guess(sys)
	f := make([]float64, 41)
	jac := prog.NewJacobian()
	var lu mat.LU
	step := mat.NewVecDense(41, nil)
	for it := 0; ; it++ {
		if it == 50 {
			t.Fatalf("Newton did not converge: |F| = %g", floats.Norm(f, math.Inf(1)))
		}
		if err := e.ResidualJacobian(f, jac, x, p); err != nil {
			t.Fatal(err)
		}
		if floats.Norm(f, math.Inf(1)) < 1e-10 {
			break
		}
		lu.Factorize(jac.Dense())
		if err := lu.SolveVecTo(step, false, mat.NewVecDense(41, f)); err != nil {
			t.Fatal(err)
		}
		for i := range x {
			x[i] = min(max(x[i]-step.AtVec(i), 1e-12), 1-1e-12)
		}
	}
	if yD, xB := x[40], x[0]; math.Abs(yD-0.989996) > 1e-6 || math.Abs(xB-0.010004) > 1e-6 {
		t.Errorf("yD = %.6f, xB = %.6f; want 0.989996, 0.010004 (checkvalues.md §2d)", yD, xB)
	}
	var out [2]float64
	if err := e.Outputs(out[:], x, p); err != nil || out != [2]float64{x[40], x[0]} {
		t.Errorf("outputs %v (err %v), want top x[41], bottom x[1]", out, err)
	}
}

func TestConcurrentEvals(t *testing.T) {
	sys := multiColumn(20, 10)
	prog := mustCompile(t, sys)
	x, p := guess(sys)
	rnd := rand.New(rand.NewPCG(1, 1))
	for i := range x {
		x[i] = 0.05 + 0.25*rnd.Float64()
	}
	want := prog.NewJacobian()
	if err := prog.NewEval().Jacobian(want, x, p); err != nil {
		t.Fatal(err)
	}
	const workers = 4
	got := make([]*Sparse, workers)
	var wg sync.WaitGroup
	for w := range workers {
		wg.Go(func() {
			e := prog.NewEval()
			got[w] = prog.NewJacobian()
			for range 20 {
				if err := e.Jacobian(got[w], x, p); err != nil {
					t.Error(err)
					return
				}
			}
		})
	}
	wg.Wait()
	for w, g := range got {
		if !slices.Equal(g.Val, want.Val) {
			t.Errorf("worker %d: Jacobian differs from the serial one", w)
		}
	}
}

func TestNoAllocations(t *testing.T) {
	sys := binaryColumn(41, 21)
	prog := mustCompile(t, sys)
	e := prog.NewEval()
	x, p := guess(sys)
	f := make([]float64, prog.NumEquations())
	jac := prog.NewJacobian()
	cols := sys.Inputs
	dp := mat.NewDense(prog.NumEquations(), len(cols), nil)
	dx := mat.NewDense(prog.NumOutputs(), prog.NumUnknowns(), nil)
	dyp := mat.NewDense(prog.NumOutputs(), len(cols), nil)
	fdj := mat.NewDense(prog.NumEquations(), prog.NumUnknowns(), nil)
	outs, defs, checks := make([]float64, prog.NumOutputs()), make([]float64, prog.NumDefines()), make([]float64, prog.NumChecks())
	for name, fn := range map[string]func() error{
		"Residual":         func() error { return e.Residual(f, x, p) },
		"Outputs":          func() error { return e.Outputs(outs, x, p) },
		"Defines":          func() error { return e.Defines(defs, x, p) },
		"Checks":           func() error { return e.Checks(checks, x, p) },
		"Jacobian":         func() error { return e.Jacobian(jac, x, p) },
		"ResidualJacobian": func() error { return e.ResidualJacobian(f, jac, x, p) },
		"ParamJacobian":    func() error { return e.ParamJacobian(dp, x, p, cols) },
		"OutputGradients":  func() error { return e.OutputGradients(dx, dyp, x, p, cols) },
		"JacobianFD":       func() error { return e.JacobianFD(fdj, x, p) },
	} {
		var err error
		if n := testing.AllocsPerRun(5, func() { err = fn() }); n != 0 || err != nil {
			t.Errorf("%s: %v allocations per call (err %v), want 0", name, n, err)
		}
	}
}

func TestEvalErrors(t *testing.T) {
	at := func(line, col int) model.Pos { return model.Pos{File: "model.yaml", Line: line, Col: col} }
	x0 := &model.Var{Pos: at(31, 22), Index: 0}
	x1 := &model.Var{Pos: at(31, 30), Index: 1}
	one := &model.Const{Pos: at(31, 26), Value: 1}
	for _, tc := range []struct {
		name   string
		expr   model.Node
		x      []float64
		jac    bool   // the error comes from the derivative only
		output bool   // put the formula in an output instead of an equation
		op     string // Op of the error
		want   string
	}{
		{name: "log", x: []float64{0.8, 0},
			expr: &model.Call{Pos: at(31, 18), Fn: model.FnLog, Args: []model.Node{&model.Binary{Pos: at(31, 24), Op: model.OpSub, L: x0, R: one}}},
			op:   "log", want: `model.yaml:31:18: log of a non-positive value (-0.2) in equation "sugar"`},
		{name: "log10 of zero", x: []float64{0, 0},
			expr: &model.Call{Pos: at(31, 18), Fn: model.FnLog10, Args: []model.Node{x0}},
			op:   "log10", want: `model.yaml:31:18: log of a non-positive value (0) in equation "sugar"`},
		{name: "sqrt", x: []float64{-4, 0},
			expr: &model.Binary{Pos: at(31, 20), Op: model.OpAdd, L: x1, R: &model.Call{Pos: at(31, 12), Fn: model.FnSqrt, Args: []model.Node{x0}}},
			op:   "sqrt", want: `model.yaml:31:12: sqrt of a negative value (-4) in equation "sugar"`},
		{name: "division", x: []float64{2, 0},
			expr: &model.Binary{Pos: at(31, 24), Op: model.OpDiv, L: x0, R: x1},
			op:   "/", want: `model.yaml:31:24: division by zero (numerator 2) in equation "sugar"`},
		{name: "power", x: []float64{-2, 0},
			expr: &model.Binary{Pos: at(31, 25), Op: model.OpPow, L: x0, R: &model.Const{Value: 0.5}},
			op:   "^", want: `model.yaml:31:25: negative base (-2) to a non-integer power (0.5) in equation "sugar"`},
		{name: "zero to a negative power", x: []float64{0, -1},
			expr: &model.Call{Pos: at(31, 9), Fn: model.FnPow, Args: []model.Node{x0, x1}},
			op:   "pow", want: `model.yaml:31:9: zero to a negative power (-1) in equation "sugar"`},
		{name: "overflow", x: []float64{800, 0},
			expr: &model.Call{Pos: at(31, 3), Fn: model.FnExp, Args: []model.Node{x0}},
			op:   "exp", want: `model.yaml:31:3: result overflows (+Inf) in equation "sugar"`},
		{name: "NaN unknown", x: []float64{1, math.NaN()},
			expr: &model.Binary{Pos: at(31, 26), Op: model.OpMul, L: x0, R: x1},
			op:   "x1", want: `model.yaml:31:30: x1 is NaN in equation "sugar"`},
		{name: "in an output", x: []float64{-1, 0}, output: true,
			expr: &model.Call{Pos: at(40, 7), Fn: model.FnLog, Args: []model.Node{x0}},
			op:   "log", want: `model.yaml:40:7: log of a non-positive value (-1) in output "sugar"`},
		{name: "infinite derivative", x: []float64{0, 3}, jac: true,
			expr: &model.Binary{Pos: at(31, 20), Op: model.OpMul, L: x1, R: &model.Call{Pos: at(31, 12), Fn: model.FnSqrt, Args: []model.Node{x0}}},
			op:   "sqrt", want: `model.yaml:31:12: sqrt has an infinite derivative at 0 in equation "sugar"`},
		{name: "negative base to a varying power", x: []float64{-2, 2}, jac: true,
			expr: &model.Binary{Pos: at(31, 14), Op: model.OpPow, L: x0, R: x1},
			op:   "^", want: `model.yaml:31:14: a negative base (-2) to a varying power has no real derivative with respect to the power in equation "sugar"`},
	} {
		t.Run(tc.name, func(t *testing.T) {
			sys := &model.System{Unknowns: unknowns("x0", "x1")}
			if tc.output {
				sys.Outputs = []model.Output{{Name: "sugar", Expr: tc.expr}}
			} else {
				sys.Equations = []model.Equation{{Name: "sugar", Residual: tc.expr}}
			}
			prog := mustCompile(t, sys)
			e := prog.NewEval()
			var err error
			switch {
			case tc.output:
				err = e.Outputs(make([]float64, 1), tc.x, nil)
			case tc.jac:
				if err := e.Residual(make([]float64, 1), tc.x, nil); err != nil {
					t.Fatalf("Residual: %v, want no error", err)
				}
				err = e.Jacobian(prog.NewJacobian(), tc.x, nil)
			default:
				err = e.Residual(make([]float64, 1), tc.x, nil)
			}
			var ee *EvalError
			if !errors.As(err, &ee) {
				t.Fatalf("error %v (%T), want *EvalError", err, err)
			}
			if err.Error() != tc.want {
				t.Errorf("error\n %s\nwant\n %s", err, tc.want)
			}
			if ee.Op != tc.op || ee.Equation != "sugar" {
				t.Errorf("Op %q, Equation %q; want %q, \"sugar\"", ee.Op, ee.Equation, tc.op)
			}
		})
	}
}

// TestDerivativeErrorsOnlyWhenAsked: sqrt(p)*x at p = 0 has a finite dF/dx
// but an infinite dF/dp; only ParamJacobian reports it.
func TestDerivativeErrorsOnlyWhenAsked(t *testing.T) {
	at := model.Pos{File: "m.yaml", Line: 2, Col: 5}
	sys := &model.System{
		Unknowns: unknowns("x"),
		Params:   []model.Symbol{{Name: "p"}, {Name: "q"}},
		Equations: []model.Equation{{Name: "e", Residual: &model.Binary{Op: model.OpMul,
			L: &model.Call{Pos: at, Fn: model.FnSqrt, Args: []model.Node{&model.Param{Index: 0}}},
			R: &model.Binary{Op: model.OpAdd, L: &model.Var{}, R: &model.Param{Index: 1}}}}},
	}
	prog := mustCompile(t, sys)
	e := prog.NewEval()
	x, p := []float64{2}, []float64{0, 1}
	jac := prog.NewJacobian()
	if err := e.Jacobian(jac, x, p); err != nil || jac.Val[0] != 0 {
		t.Errorf("Jacobian: %v, %v; want no error, 0", jac.Val, err)
	}
	dq := mat.NewDense(1, 1, nil)
	if err := e.ParamJacobian(dq, x, p, []int{1}); err != nil || dq.At(0, 0) != 0 {
		t.Errorf("dF/dq: %v, %v; want no error, 0", dq.At(0, 0), err)
	}
	err := e.ParamJacobian(mat.NewDense(1, 2, nil), x, p, []int{1, 0})
	want := `m.yaml:2:5: sqrt has an infinite derivative at 0 in equation "e"`
	if err == nil || err.Error() != want {
		t.Errorf("dF/dp: error %v, want %s", err, want)
	}
}

// TestPowerAtZero: 0^c is fine for c >= 1, in value and derivative, with a
// constant or a varying exponent (d/dy of x^y at x = 0 is taken as 0).
func TestPowerAtZero(t *testing.T) {
	for _, tc := range []struct {
		name string
		expr model.Node
		x    []float64
		want []float64 // gradient
	}{
		{"x^1.5", &model.Binary{Op: model.OpPow, L: &model.Var{}, R: &model.Const{Value: 1.5}}, []float64{0, 0}, []float64{0, 0}},
		{"x^2", &model.Binary{Op: model.OpPow, L: &model.Var{}, R: &model.Const{Value: 2}}, []float64{0, 0}, []float64{0, 0}},
		{"x^3", &model.Binary{Op: model.OpPow, L: &model.Var{}, R: &model.Const{Value: 3}}, []float64{0, 0}, []float64{0, 0}},
		{"x^y, y=1", &model.Binary{Op: model.OpPow, L: &model.Var{}, R: &model.Var{Index: 1}}, []float64{0, 1}, []float64{1, 0}},
		{"x^y, y=2.5", &model.Binary{Op: model.OpPow, L: &model.Var{}, R: &model.Var{Index: 1}}, []float64{0, 2.5}, []float64{0, 0}},
	} {
		sys := &model.System{Unknowns: unknowns("x", "y"), Equations: []model.Equation{{Name: tc.name, Residual: tc.expr}}}
		prog := mustCompile(t, sys)
		jac := prog.NewJacobian()
		if err := prog.NewEval().Jacobian(jac, tc.x, nil); err != nil {
			t.Errorf("%s: %v", tc.name, err)
			continue
		}
		got := jac.Dense().RawRowView(0)
		if !slices.Equal(got, tc.want) {
			t.Errorf("%s at %v: gradient %v, want %v", tc.name, tc.x, got, tc.want)
		}
	}
}

func TestCompileErrors(t *testing.T) {
	at := model.Pos{File: "m.yaml", Line: 4, Col: 9}
	for _, tc := range []struct {
		name string
		expr model.Node
		want string
	}{
		{"constant log", &model.Call{Pos: at, Fn: model.FnLog, Args: []model.Node{&model.Const{Value: -1}}},
			`m.yaml:4:9: log of a non-positive value (-1) in equation "e"`},
		{"constant division", &model.Binary{Pos: at, Op: model.OpDiv, L: &model.Var{}, R: &model.Binary{Op: model.OpSub, L: &model.Const{Value: 2}, R: &model.Const{Value: 2}}},
			`m.yaml:4:9: division by zero in equation "e"`},
		{"unknown out of range", &model.Var{Pos: at, Index: 3},
			`m.yaml:4:9: jacobian: unknown index 3 out of range [0, 1) in equation "e"`},
		{"parameter out of range", &model.Param{Pos: at, Index: 0},
			`m.yaml:4:9: jacobian: parameter index 0 out of range [0, 0) in equation "e"`},
		{"arguments", &model.Call{Pos: at, Fn: model.FnExp, Args: []model.Node{&model.Var{}, &model.Var{}}},
			`m.yaml:4:9: jacobian: exp takes 1 argument(s), got 2`},
		{"no formula", nil, `-: jacobian: equation "e" has no formula`},
	} {
		t.Run(tc.name, func(t *testing.T) {
			sys := &model.System{Unknowns: unknowns("x"), Equations: []model.Equation{{Name: "e", Residual: tc.expr}}}
			_, err := Compile(sys)
			if err == nil || err.Error() != tc.want {
				t.Errorf("error %v, want %s", err, tc.want)
			}
		})
	}
}

func TestCompileErrorCap(t *testing.T) {
	sys := &model.System{}
	for i := range 25 {
		sys.Equations = append(sys.Equations, model.Equation{Name: fmt.Sprint("e", i),
			Residual: &model.Call{Pos: model.Pos{File: "m.yaml", Line: i + 1, Col: 3}, Fn: model.FnSqrt,
				Args: []model.Node{&model.Const{Value: -1}}}})
	}
	_, err := Compile(sys)
	lines := strings.Split(fmt.Sprint(err), "\n")
	if len(lines) != maxErrors+1 || lines[0] != `m.yaml:1:3: sqrt of a negative value (-1) in equation "e0"` ||
		lines[maxErrors] != "jacobian: too many errors" {
		t.Errorf("error has %d lines:\n%v", len(lines), err)
	}
}

func TestSparse(t *testing.T) {
	s := &Sparse{Rows: 2, Cols: 3, RowPtr: []int{0, 2, 3}, ColIdx: []int{0, 2, 1}, Val: []float64{1, 2, 3}}
	want := mat.NewDense(2, 3, []float64{1, 0, 2, 0, 3, 0})
	if !mat.Equal(s.Dense(), want) {
		t.Errorf("Dense %v", mat.Formatted(s.Dense()))
	}
	for i := 0; i < 2; i++ {
		for j := 0; j < 3; j++ {
			if s.At(i, j) != want.At(i, j) {
				t.Errorf("At(%d,%d) = %g, want %g", i, j, s.At(i, j), want.At(i, j))
			}
		}
	}
	s.Val = nil
	if s.At(0, 2) != 1 || s.At(0, 1) != 0 {
		t.Errorf("pattern At")
	}
	empty := &Sparse{RowPtr: []int{0}}
	if r, c := empty.Dense().Dims(); r != 0 || c != 0 {
		t.Errorf("empty Dense is %d×%d", r, c)
	}
}
