package jacobian

import (
	"math"

	"gonum.org/v1/gonum/mat"
)

// JacobianFD approximates dF/dx at (x, p) by central differences into the
// dense m×n matrix dst. It exists only as a cross-check of Jacobian. The step
// for unknown j is h = cbrt(eps)*max(|x_j|, typical_j), where typical_j is
// the magnitude of the unknown's starting guess (1 when the guess is 0).
func (e *Eval) JacobianFD(dst *mat.Dense, x, p []float64) error {
	e.check(x, p)
	checkDims("dst", dst, len(e.prog.eqs), e.prog.nx)
	copy(e.pw, p)
	return e.central(dst, x, e.xw, e.prog.xTyp, nil)
}

// ParamJacobianFD approximates dF/dp[cols[k]] at (x, p) by central
// differences into column k of dst, as a cross-check of ParamJacobian. The
// step is scaled as in JacobianFD, with the parameter's nominal value as its
// typical magnitude.
func (e *Eval) ParamJacobianFD(dst *mat.Dense, x, p []float64, cols []int) error {
	e.check(x, p)
	checkDims("dst", dst, len(e.prog.eqs), len(cols))
	copy(e.xw, x)
	return e.central(dst, p, e.pw, e.prog.pTyp, cols)
}

// central perturbs w (e.xw or e.pw, the copy of z) one entry at a time:
// column k of dst is the central difference with respect to z[cols[k]], or
// z[k] when cols is nil.
func (e *Eval) central(dst *mat.Dense, z, w, typ []float64, cols []int) error {
	copy(w, z)
	_, nc := dst.Dims()
	cbrtEps := math.Cbrt(0x1p-52)
	for k := 0; k < nc; k++ {
		j := k
		if cols != nil {
			j = cols[k]
		}
		h := cbrtEps * max(math.Abs(z[j]), typ[j])
		w[j] = z[j] + h
		up := w[j]
		if err := e.Residual(e.f1, e.xw, e.pw); err != nil {
			return err
		}
		w[j] = z[j] - h
		down := w[j]
		if err := e.Residual(e.f2, e.xw, e.pw); err != nil {
			return err
		}
		w[j] = z[j]
		span := up - down // the step actually taken, after rounding
		for i := range e.f1 {
			dst.Set(i, k, (e.f1[i]-e.f2[i])/span)
		}
	}
	return nil
}
