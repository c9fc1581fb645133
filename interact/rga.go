package interact

import (
	"math"

	"gonum.org/v1/gonum/mat"
)

// ConditionLimit is the condition number above which a gain matrix is
// treated as singular: RGA and the functions built on it return a
// mat.Condition error beyond it. At 1e12 a double-precision inverse keeps
// only about four significant digits.
const ConditionLimit = 1e12

// RGA stores in dst the relative gain array of the square matrix k,
//
//	Λ = K ∘ (K⁻¹)ᵀ,   λ_ij = k_ij · [K⁻¹]_ji,
//
// the element-wise product of K and the transpose of its inverse. λ_ij is the
// ratio of the gain from u_j to y_i with all other loops open to that with
// all other outputs held perfectly by the other inputs.
//
// If k is near-singular (condition number above ConditionLimit) RGA returns a
// mat.Condition error; dst then holds the values computed anyway. RGA panics
// if k is not square or dst is non-empty with the wrong shape.
func RGA(dst *mat.Dense, k mat.Matrix) error {
	r, c := k.Dims()
	if r != c {
		panic(mat.ErrSquare)
	}
	var inv mat.Dense
	_, err := rgaDet(dst, &inv, k)
	return err
}

// rgaDet is RGA that also returns det k and leaves K⁻¹ in inv, all from one
// LU factorisation (det is NaN and inv unset when k is exactly singular).
func rgaDet(dst, inv *mat.Dense, k mat.Matrix) (det float64, err error) {
	var w luWork
	return rgaDetWith(&w, dst, inv, k)
}

// rgaDetWith is rgaDet with the LU in w's storage.
func rgaDetWith(w *luWork, dst, inv *mat.Dense, k mat.Matrix) (det float64, err error) {
	r, c := k.Dims()
	reuseAs(dst, r, c)
	kk := asDense(k)
	cond, det := w.inverseDet(inv, kk)
	if math.IsInf(cond, 1) {
		for i := 0; i < r; i++ {
			for j := 0; j < c; j++ {
				dst.Set(i, j, math.NaN())
			}
		}
		return det, mat.Condition(cond)
	}
	// Λ = K ∘ (K⁻¹)ᵀ, element by element as MulElem would.
	kd, id, dd := kk.RawMatrix(), inv.RawMatrix(), dst.RawMatrix()
	for i := 0; i < r; i++ {
		for j := 0; j < c; j++ {
			dd.Data[i*dd.Stride+j] = kd.Data[i*kd.Stride+j] * id.Data[j*id.Stride+i]
		}
	}
	if cond > ConditionLimit {
		return det, mat.Condition(cond)
	}
	return det, nil
}

// inverse stores the inverse of the square k in dst from one LU
// factorisation and returns k's condition number (∞-norm estimate); +Inf
// when k is exactly singular, in which case dst is left unset.
func inverse(dst *mat.Dense, k mat.Matrix) float64 {
	cond, _ := inverseDet(dst, k)
	return cond
}

// inverseDet is inverse that also returns det k from the same
// factorisation, computed exactly as mat.Det computes it.
func inverseDet(dst *mat.Dense, k mat.Matrix) (cond, det float64) {
	var w luWork
	return w.inverseDet(dst, asDense(k))
}

func asDense(k mat.Matrix) *mat.Dense {
	if d, ok := k.(*mat.Dense); ok {
		return d
	}
	return mat.DenseCopyOf(k)
}

// RGAPinv stores in dst the relative gain array of a non-square matrix k
// (Chang & Yu 1990), with the Moore-Penrose pseudo-inverse in place of the
// inverse:
//
//	Λ = K ∘ (K⁺)ᵀ.
//
// When k has full column rank (more outputs than inputs) the column sums are
// 1 and row i sums to ||e_iᵀ U_r||² <= 1, a measure of how much the inputs
// can move output i independently; when k has full row rank the roles of rows
// and columns swap. Singular values below max(r,c)·σ_max·eps count as zero.
// RGAPinv returns an error when k is zero. It panics if dst is non-empty with
// the wrong shape.
func RGAPinv(dst *mat.Dense, k mat.Matrix) error {
	r, c := k.Dims()
	reuseAs(dst, r, c)
	var pinv mat.Dense
	if _, err := pseudoInverse(&pinv, k); err != nil {
		return err
	}
	dst.MulElem(k, pinv.T())
	return nil
}

// pseudoInverse stores K⁺ (c×r) in dst and returns the numerical rank.
func pseudoInverse(dst *mat.Dense, k mat.Matrix) (int, error) {
	r, c := k.Dims()
	var svd mat.SVD
	if !svd.Factorize(k, mat.SVDThin) {
		return 0, errSVD
	}
	s := svd.Values(nil)
	if len(s) == 0 || s[0] == 0 {
		return 0, errZero
	}
	tol := float64(max(r, c)) * s[0] * 0x1p-52
	var u, v mat.Dense
	svd.UTo(&u)
	svd.VTo(&v)
	rank := 0
	for _, x := range s {
		if x > tol {
			rank++
		}
	}
	// K⁺ = V_r Σ_r⁻¹ U_rᵀ.
	vr := v.Slice(0, c, 0, rank).(*mat.Dense)
	ur := u.Slice(0, r, 0, rank)
	var vs mat.Dense
	vs.CloneFrom(vr)
	for j := 0; j < rank; j++ {
		for i := 0; i < c; i++ {
			vs.Set(i, j, vs.At(i, j)/s[j])
		}
	}
	dst.Reset()
	dst.Mul(&vs, ur.T())
	return rank, nil
}

// Niederlinski returns the Niederlinski index of k under the pairing p,
//
//	NI = det(K_p) / ∏_i k_{i,p(i)},
//
// where K_p is k with its columns reordered so the paired gains lie on the
// diagonal. The index does not depend on the signs of the gains (a column
// sign flip changes numerator and denominator alike). With integral action in
// every loop, NI < 0 means the closed loop is unstable whatever the tuning
// (Niederlinski 1971, via Skogestad & Postlethwaite eq. 10.58). NaN when a
// paired gain is zero. It panics if k is not square or p is not a
// permutation of its size.
func Niederlinski(k mat.Matrix, p Pairing) float64 {
	n, c := k.Dims()
	if n != c {
		panic(mat.ErrSquare)
	}
	p.mustBePermutation(n)
	if n == 2 {
		// det2, as the Analyzer computes det K, so that this is the
		// Analysis's NI of p bit for bit when K is unscaled.
		return niederlinski(k, p, det2(k.At(0, 0), k.At(0, 1), k.At(1, 0), k.At(1, 1)))
	}
	var lu mat.LU
	lu.Factorize(k)
	return niederlinski(k, p, lu.Det())
}

// niederlinski uses det(K_p) = sign(p)·det(K), so each pairing costs O(n).
func niederlinski(k mat.Matrix, p Pairing, det float64) float64 {
	prod := 1.0
	if d, ok := k.(*mat.Dense); ok {
		raw := d.RawMatrix()
		for i, j := range p {
			prod *= raw.Data[i*raw.Stride+j]
		}
	} else {
		for i, j := range p {
			prod *= k.At(i, j)
		}
	}
	if prod == 0 {
		return math.NaN()
	}
	return float64(p.sign()) * det / prod
}

// RGANumber returns ||Λ - P||_sum, the sum of the absolute elements of the
// RGA minus the pairing's permutation matrix: 0 for a perfectly decoupled
// pairing, large when the pairing fights interaction.
func RGANumber(rga mat.Matrix, p Pairing) float64 {
	n, c := rga.Dims()
	if n != c {
		panic(mat.ErrSquare)
	}
	p.mustBePermutation(n)
	s := 0.0
	for i := 0; i < n; i++ {
		for j := 0; j < n; j++ {
			v := rga.At(i, j)
			if p[i] == j {
				v--
			}
			s += math.Abs(v)
		}
	}
	return s
}

// ElementSensitivity returns 1/λ_ij for every element: the relative change of
// the single gain k_ij that makes K singular (k_ij → k_ij(1 - 1/λ_ij);
// Skogestad & Postlethwaite, RGA property 6). A large |λ_ij| means a small
// error in that gain alone already makes the plant uncontrollable. Elements
// with λ_ij = 0 give ±Inf: no change of that element alone makes K singular.
func ElementSensitivity(rga mat.Matrix) *mat.Dense {
	r, c := rga.Dims()
	out := mat.NewDense(r, c, nil)
	elementSensitivityInto(out, rga)
	return out
}

func elementSensitivityInto(out *mat.Dense, rga mat.Matrix) {
	r, c := rga.Dims()
	if d, ok := rga.(*mat.Dense); ok {
		src, dst := d.RawMatrix(), out.RawMatrix()
		for i := 0; i < r; i++ {
			for j, v := range src.Data[i*src.Stride : i*src.Stride+c] {
				dst.Data[i*dst.Stride+j] = 1 / v
			}
		}
		return
	}
	for i := 0; i < r; i++ {
		for j := 0; j < c; j++ {
			out.Set(i, j, 1/rga.At(i, j))
		}
	}
}

func reuseAs(dst *mat.Dense, r, c int) {
	if dst.IsEmpty() {
		dst.ReuseAs(r, c)
		return
	}
	if rr, cc := dst.Dims(); rr != r || cc != c {
		panic(mat.ErrShape)
	}
}

func asCondition(err error) mat.Condition {
	if c, ok := err.(mat.Condition); ok {
		return c
	}
	return mat.Condition(math.Inf(1))
}

func isInfOrNaN(x float64) bool { return math.IsInf(x, 0) || math.IsNaN(x) }
