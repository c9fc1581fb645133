package interact

import (
	"errors"
	"fmt"
	"math"

	"github.com/loopwright/loopwright/jacobian"
	"github.com/loopwright/loopwright/model"
	"github.com/loopwright/loopwright/solve/sparse"
	"gonum.org/v1/gonum/mat"
)

// Solver solves Fx·X = B with a factorisation of the square Jacobian Fx made
// once, for any number of right-hand sides.
type Solver interface {
	// SolveTo sets dst to Fx⁻¹·b. dst is resized when empty.
	SolveTo(dst *mat.Dense, b mat.Matrix) error
}

type denseSolver struct{ lu mat.LU }

// DenseSolver factorises a dense Fx with gonum's LU. It returns a
// SingularError when Fx is singular or its condition number exceeds
// ConditionLimit, and panics if fx is not square.
func DenseSolver(fx mat.Matrix) (Solver, error) {
	r, c := fx.Dims()
	if r != c {
		panic(mat.ErrSquare)
	}
	s := &denseSolver{}
	s.lu.Factorize(fx)
	if cond := s.lu.Cond(); !(cond <= ConditionLimit) {
		return nil, &SingularError{What: "Fx (dF/dx)", Cond: cond}
	}
	return s, nil
}

func (s *denseSolver) SolveTo(dst *mat.Dense, b mat.Matrix) error {
	err := s.lu.SolveTo(dst, false, b)
	if c, ok := err.(mat.Condition); ok && float64(c) <= ConditionLimit {
		return nil // gonum's own limit is looser than ours, checked at factorisation
	}
	return err
}

type sparseSolver struct{ lu *sparse.LU }

// SparseSolver factorises a sparse Fx with solve/sparse's LU. A singular Fx
// returns the *sparse.SingularError (which names the column, that is the
// unknown); an estimated condition number above ConditionLimit returns a
// SingularError.
func SparseSolver(fx *sparse.CSR) (Solver, error) {
	lu, err := sparse.Factorize(fx, nil)
	if err != nil {
		return nil, err
	}
	if cond := lu.Cond1(); !(cond <= ConditionLimit) {
		return nil, &SingularError{What: "Fx (dF/dx)", Cond: cond}
	}
	return &sparseSolver{lu: lu}, nil
}

func (s *sparseSolver) SolveTo(dst *mat.Dense, b mat.Matrix) error {
	n, c := b.Dims()
	if dst.IsEmpty() {
		dst.ReuseAs(n, c)
	}
	col := make([]float64, n)
	for j := 0; j < c; j++ {
		for i := 0; i < n; i++ {
			col[i] = b.At(i, j)
		}
		s.lu.Solve(col, col)
		dst.SetCol(j, col)
	}
	return nil
}

// GainsFromJacobian returns the steady-state gains of a model F(x, u, d) = 0
// with outputs y = g(x, u, d), by the implicit-function theorem:
//
//	K  = Gu - Gx·Fx⁻¹·Fu,
//	Kd = Gd - Gx·Fx⁻¹·Fd,
//
// where Fx = ∂F/∂x (through its factorisation fx), Fu = ∂F/∂u, Fd = ∂F/∂d,
// Gx = ∂g/∂x, Gu = ∂g/∂u and Gd = ∂g/∂d. Fu and Fd are solved together, one
// solve per column, from the one factorisation. gu and gd may be nil (the
// outputs do not depend on the inputs or disturbances directly); fd nil means
// no disturbances, and kd is then nil. It panics on mismatched shapes.
func GainsFromJacobian(fx Solver, fu, fd, gx, gu, gd mat.Matrix) (k, kd *mat.Dense, err error) {
	neq, nu := fu.Dims()
	ny, nx := gx.Dims()
	if nx != neq {
		panic(fmt.Sprintf("interact: Gx has %d columns for %d equations", nx, neq))
	}
	nd := 0
	if fd != nil {
		var r int
		r, nd = fd.Dims()
		if r != neq {
			panic(mat.ErrShape)
		}
	}
	rhs := mat.NewDense(neq, nu+nd, nil)
	rhs.Slice(0, neq, 0, nu).(*mat.Dense).Copy(fu)
	if nd > 0 {
		rhs.Slice(0, neq, nu, nu+nd).(*mat.Dense).Copy(fd)
	}
	var sol mat.Dense
	if err := fx.SolveTo(&sol, rhs); err != nil {
		return nil, nil, err
	}
	var all mat.Dense
	all.Mul(gx, &sol)
	all.Scale(-1, &all)
	k = mat.NewDense(ny, nu, nil)
	k.Copy(all.Slice(0, ny, 0, nu))
	if gu != nil {
		k.Add(k, gu)
	}
	if nd > 0 {
		kd = mat.NewDense(ny, nd, nil)
		kd.Copy(all.Slice(0, ny, nu, nu+nd))
		if gd != nil {
			kd.Add(kd, gd)
		}
	}
	return k, kd, nil
}

// Gains computes the gain set of a compiled model at the point (x, p), which
// should be a converged operating point: dF/dx is factorised once (sparse
// LU), and K and Kd follow from GainsFromJacobian. The gains are returned in
// display units, K_disp = K_SI × (input unit's SI scale) / (output unit's SI
// scale), affine units counting as differences. Signals carry their display
// unit, span and the nominal value at (x, p). It returns an error naming the
// unknown where dF/dx is singular, and when there are no inputs or outputs.
func Gains(prog *jacobian.Program, sys *model.System, x, p []float64) (*GainSet, error) {
	nx, neq := len(sys.Unknowns), len(sys.Equations)
	if neq != nx {
		return nil, fmt.Errorf("interact: %s has %d equations for %d unknowns: gains need a square system", sys.File, neq, nx)
	}
	if len(sys.Inputs) == 0 || len(sys.Outputs) == 0 {
		return nil, fmt.Errorf("interact: %s declares %d inputs and %d outputs: gains need at least one of each", sys.File, len(sys.Inputs), len(sys.Outputs))
	}
	ev := prog.NewEval()
	jac := prog.NewJacobian()
	if err := ev.Jacobian(jac, x, p); err != nil {
		return nil, err
	}
	fx, err := SparseSolver(&sparse.CSR{Rows: jac.Rows, Cols: jac.Cols, RowPtr: jac.RowPtr, ColIdx: jac.ColIdx, Val: jac.Val})
	if err != nil {
		var se *sparse.SingularError
		if errors.As(err, &se) && se.Col >= 0 && se.Col < nx {
			u := sys.Unknowns[se.Col]
			return nil, fmt.Errorf("interact: %s: dF/dx is singular at unknown %q at this operating point: the equations do not fix it (check that the point converged and that %s appears in an independent equation)", u.Pos, u.Name, u.Name)
		}
		return nil, fmt.Errorf("interact: %s: %w", sys.File, err)
	}
	nu, nd, ny := len(sys.Inputs), len(sys.Disturbances), len(sys.Outputs)
	cols := append(append([]int(nil), sys.Inputs...), sys.Disturbances...)
	fp := mat.NewDense(neq, nu+nd, nil)
	if err := ev.ParamJacobian(fp, x, p, cols); err != nil {
		return nil, err
	}
	gx := mat.NewDense(ny, nx, nil)
	gp := mat.NewDense(ny, nu+nd, nil)
	if err := ev.OutputGradients(gx, gp, x, p, cols); err != nil {
		return nil, err
	}
	var fd, gd mat.Matrix
	if nd > 0 {
		fd, gd = fp.Slice(0, neq, nu, nu+nd), gp.Slice(0, ny, nu, nu+nd)
	}
	kSI, kdSI, err := GainsFromJacobian(fx, fp.Slice(0, neq, 0, nu), fd, gx, gp.Slice(0, ny, 0, nu), gd)
	if err != nil {
		return nil, err
	}
	yv := make([]float64, ny)
	if err := ev.Outputs(yv, x, p); err != nil {
		return nil, err
	}
	g := &GainSet{Source: "model"}
	for i, o := range sys.Outputs {
		g.Outputs = append(g.Outputs, signal(o.Name, o.Unit, o.Span, yv[i]))
	}
	for _, idx := range sys.Inputs {
		s := sys.Params[idx]
		g.Inputs = append(g.Inputs, signal(s.Name, s.Unit, s.Span, p[idx]))
	}
	for _, idx := range sys.Disturbances {
		s := sys.Params[idx]
		g.Disturbances = append(g.Disturbances, signal(s.Name, s.Unit, s.Span, p[idx]))
	}
	g.K = toDisplay(kSI, g.Outputs, g.Inputs)
	if kdSI != nil {
		g.Kd = toDisplay(kdSI, g.Outputs, g.Disturbances)
	}
	for i := 0; i < ny; i++ {
		for j := 0; j < nu; j++ {
			if v := g.K.At(i, j); math.IsNaN(v) || math.IsInf(v, 0) {
				return nil, fmt.Errorf("interact: %s: gain of output %q to input %q is %v", sys.Outputs[i].Pos, sys.Outputs[i].Name, g.Inputs[j].Name, v)
			}
		}
	}
	return g, nil
}

func signal(name string, u model.Unit, spanSI, valueSI float64) Signal {
	sc := u.DiffScale()
	return Signal{Name: name, Unit: u.Text, Scale: sc, Span: spanSI / sc, Nominal: u.FromSI(valueSI)}
}

func toDisplay(kSI *mat.Dense, rows, cols []Signal) *mat.Dense {
	r, c := kSI.Dims()
	out := mat.NewDense(r, c, nil)
	for i := 0; i < r; i++ {
		for j := 0; j < c; j++ {
			out.Set(i, j, kSI.At(i, j)*cols[j].Scale/rows[i].Scale)
		}
	}
	return out
}
