package interact

import (
	"math"
	"math/bits"

	"gonum.org/v1/gonum/mat"
)

// SubsystemCheck is the steady-state check of the loops left in automatic
// when the other loops of a pairing are switched to manual (opened).
type SubsystemCheck struct {
	Auto    []int     // outputs whose loops stay in automatic, ascending
	NI      float64   // Niederlinski index of their paired sub-matrix
	Lambdas []float64 // relative gains of the paired elements in the sub-matrix RGA, in Auto order
	Fails   bool      // NI <= 0 or a paired λ < 0 (or the sub-matrix is singular)
}

// Integrity checks every set of two or more loops that can remain in
// automatic while the others are in manual: for each proper subset S of the
// outputs with |S| >= 2 it takes the paired sub-matrix K[S, p(S)] and
// computes its Niederlinski index and the paired elements of its RGA. A
// subset fails when NI <= 0 or a paired λ < 0: with integral action the loops
// left in automatic would go unstable, or a loop's gain would change sign,
// when the others are opened (Skogestad & Postlethwaite eq. 10.58, Remark 6
// p. 448, and Theorem 10.4). The full set is not repeated here: its NI and λ
// are the pairing's own. Results are ordered by decreasing subset size (one
// loop in manual first), then lexicographically. For n loops there are
// 2ⁿ - n - 2 subsets. Integrity panics if k is not square or p not a
// permutation of its size.
func Integrity(k mat.Matrix, p Pairing) []SubsystemCheck {
	n, c := k.Dims()
	if n != c {
		panic(mat.ErrSquare)
	}
	p.mustBePermutation(n)
	var out []SubsystemCheck
	for size := n - 1; size >= 2; size-- {
		forSubsets(n, size, func(s []int) {
			out = append(out, checkSubsystem(k, p, s))
		})
	}
	return out
}

// forSubsets calls f with every size-element subset of 0..n-1 in
// lexicographic order; the slice is reused.
func forSubsets(n, size int, f func([]int)) {
	s := make([]int, size)
	for i := range s {
		s[i] = i
	}
	for {
		f(s)
		i := size - 1
		for i >= 0 && s[i] == n-size+i {
			i--
		}
		if i < 0 {
			return
		}
		s[i]++
		for j := i + 1; j < size; j++ {
			s[j] = s[j-1] + 1
		}
	}
}

func checkSubsystem(k mat.Matrix, p Pairing, s []int) SubsystemCheck {
	var w integrityWork
	var res SubsystemCheck
	w.check(&res, asDense(k), p, s)
	return res
}

// integrityWork is the reusable storage of the integrity checks.
type integrityWork struct {
	lu       luWork
	sub, inv mat.Dense
	set      []int
}

// failing appends to dst the failing checks of Integrity(k, p), in the same
// order, reusing the storage of dst's spare capacity.
func (w *integrityWork) failing(dst []SubsystemCheck, k *mat.Dense, p Pairing) []SubsystemCheck {
	n, _ := k.Dims()
	for size := n - 1; size >= 2; size-- {
		// The subsets of 0..n-1 of this size in lexicographic order, as
		// forSubsets gives them.
		s := seqInto(w.set, size)
		w.set = s
		for {
			if len(dst) < cap(dst) {
				dst = dst[:len(dst)+1]
			} else {
				dst = append(dst, SubsystemCheck{})
			}
			if w.check(&dst[len(dst)-1], k, p, s); !dst[len(dst)-1].Fails {
				dst = dst[:len(dst)-1]
			}
			i := size - 1
			for i >= 0 && s[i] == n-size+i {
				i--
			}
			if i < 0 {
				break
			}
			s[i]++
			for j := i + 1; j < size; j++ {
				s[j] = s[j-1] + 1
			}
		}
	}
	return dst
}

// check stores in *res the check of the loops s, reusing res's slices.
func (w *integrityWork) check(res *SubsystemCheck, k *mat.Dense, p Pairing, s []int) {
	m := len(s)
	reshape(&w.sub, m, m)
	sub := &w.sub
	prod := 1.0
	for a, i := range s {
		for b, j := range s {
			sub.Set(a, b, k.At(i, p[j]))
		}
		prod *= k.At(i, p[i])
	}
	*res = SubsystemCheck{Auto: append(res.Auto[:0], s...), Lambdas: resizeFloats(res.Lambdas, m)}
	// mat.LU's determinant, condition estimate and inverse (the inverse
	// only counts when the condition is within the limit).
	cond, det := w.lu.inverseDet(&w.inv, sub)
	if !(cond <= ConditionLimit) {
		res.NI = 0
		for a := range res.Lambdas {
			res.Lambdas[a] = math.NaN()
		}
		res.Fails = true
		return
	}
	res.NI = det / prod
	if prod == 0 {
		res.NI = math.NaN()
	}
	for a := range s {
		res.Lambdas[a] = sub.At(a, a) * w.inv.At(a, a)
		if res.Lambdas[a] < 0 {
			res.Fails = true
		}
	}
	if !(res.NI > 0) {
		res.Fails = true
	}
}

// Manual returns the outputs whose loops are in manual in this check, out of
// n loops.
func (s SubsystemCheck) Manual(n int) []int {
	var mask uint64
	for _, i := range s.Auto {
		mask |= 1 << uint(i)
	}
	out := make([]int, 0, n-bits.OnesCount64(mask))
	for i := 0; i < n; i++ {
		if mask&(1<<uint(i)) == 0 {
			out = append(out, i)
		}
	}
	return out
}

// RDG returns the relative disturbance gains of the pairing p (Stanley,
// Marino-Galarraga & McAvoy 1985; Skogestad & Postlethwaite eq. 10.71),
//
//	β_id = g̃d_id / gd_id,   g̃d = K̃ K⁻¹ Kd,   K̃ = the paired gains,
//
// one row per output, one column per disturbance: β_id = k_{i,p(i)}·[K⁻¹Kd]_{p(i),d} / [Kd]_{i,d}.
// g̃d (the closed-loop disturbance gain) is the effect of disturbance d on
// output i with all other loops closed, as loop i's own controller sees it;
// β compares it with the open-loop effect gd. |β| > 1 means closing the other
// loops amplifies the disturbance in loop i; a small |β| is good. β does not
// depend on scaling. Elements where the disturbance does not move the output
// open loop (|Kd_id| below 1e-9 of the largest in that column) are NaN. RDG
// returns a SingularError when K is singular; it panics on mismatched shapes.
func RDG(k, kd mat.Matrix, p Pairing) (*mat.Dense, error) {
	n, c := k.Dims()
	if n != c {
		panic(mat.ErrSquare)
	}
	if r, _ := kd.Dims(); r != n {
		panic(mat.ErrShape)
	}
	p.mustBePermutation(n)
	var inv mat.Dense
	if cond := inverse(&inv, k); math.IsInf(cond, 1) || cond > ConditionLimit {
		return nil, &SingularError{What: "K", Cond: cond}
	}
	var x mat.Dense
	x.Mul(&inv, kd)
	return rdgFrom(k, kd, &x, p), nil
}

// rdgFrom computes β from x = K⁻¹Kd, O(n·nd) per pairing.
func rdgFrom(k, kd, x mat.Matrix, p Pairing) *mat.Dense {
	n, nd := kd.Dims()
	out := mat.NewDense(n, nd, nil)
	rdgInto(out, k, kd, x, p)
	return out
}

// rdgInto is rdgFrom into out (n × nd).
func rdgInto(out *mat.Dense, k, kd, x mat.Matrix, p Pairing) {
	n, nd := kd.Dims()
	for d := 0; d < nd; d++ {
		big := 0.0
		for i := 0; i < n; i++ {
			big = math.Max(big, math.Abs(kd.At(i, d)))
		}
		for i := 0; i < n; i++ {
			g := kd.At(i, d)
			if big == 0 || math.Abs(g) <= 1e-9*big {
				out.Set(i, d, math.NaN())
				continue
			}
			out.Set(i, d, k.At(i, p[i])*x.At(p[i], d)/g)
		}
	}
}

// Decoupler returns the ideal static decoupler D = K⁻¹ K̃ for the pairing p,
// where K̃ is diagonal with the paired gains (K̃_ii = k_{i,p(i)}). Rows of D are
// inputs, columns are loops (outputs): controller i's output v_i moves the
// inputs u = D v, and then K D = K̃, so at steady state loop i sees only its
// own open-loop gain and no other loop. The paired entries are the relative
// gains: D[p(i), i] = λ_{i,p(i)}. Decoupler returns a SingularError when K is
// singular; it panics if K is not square or p is not a permutation.
func Decoupler(k mat.Matrix, p Pairing) (*mat.Dense, error) {
	n, c := k.Dims()
	if n != c {
		panic(mat.ErrSquare)
	}
	p.mustBePermutation(n)
	var inv mat.Dense
	if cond := inverse(&inv, k); math.IsInf(cond, 1) || cond > ConditionLimit {
		return nil, &SingularError{What: "K", Cond: cond}
	}
	diag := mat.NewDiagDense(n, nil)
	for i, j := range p {
		diag.SetDiag(i, k.At(i, j))
	}
	d := mat.NewDense(n, n, nil)
	d.Mul(&inv, diag)
	return d, nil
}
