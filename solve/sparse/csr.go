// Package sparse factors square sparse matrices: a compact left-looking LU
// (Gilbert-Peierls) with threshold partial pivoting, a fill-reducing column
// order, symbolic analysis reused across numeric refactorisations of the
// same pattern, solves with one or many right-hand sides and with the
// transpose, and a cheap 1-norm condition estimate (Hager/Higham).
//
// Column order. The matrix is first given a zero-free diagonal by a maximum
// matching of rows to columns (Hopcroft-Karp, from solve/structure); the
// columns are then ordered by reverse Cuthill-McKee on the symmetrised
// pattern of the matched matrix, and at each step the matched row is the
// preferred pivot. Process models (stage-by-stage columns, trains of units)
// have banded or block-banded Jacobians, for which this order keeps the
// fill inside the band; a dense row or column (a global unknown such as a
// vapour fraction) is pushed to the end of the order, where it does no harm.
//
// Pivoting. The preferred row is taken when its magnitude is at least Tau
// times the largest candidate in the column (Tau = 0.1 by default);
// otherwise the largest candidate is. A refactorisation keeps the pivot
// sequence and the pattern of L and U, and only fails (and falls back to a
// fresh factorisation) when a kept pivot no longer passes the threshold.
//
// Band mode. Stage-by-stage models give matrices that are narrow bands once
// ordered, and on those the sparse scheme's cost is index indirection, not
// arithmetic. So after the ordering the matrix is also looked at as a band:
// columns in the chosen order (or as given) and rows in the order of their
// matched columns (or sorted by their first column), whichever of these
// orders gives the narrowest band, kl below and ku above the diagonal. When
//
//	n ≥ 8 and (2kl+ku+1)·n ≤ 4·nnz(A) + 64,
//
// that is when the band storage with room for the row interchanges' fill is
// at most about four times the matrix's entries, the LU is kept as a dense
// band (the storage of LAPACK's gbtrf, factored by its gbtf2 algorithm:
// partial pivoting among the kl+1 candidates of each column, then a rank-1
// update of the band). Every factorisation then chooses its pivots afresh,
// which costs little in a band; Tau does not apply (partial pivoting
// satisfies any threshold). A pivot column of zeros, or a pivot not above
// 64ε times the largest magnitude of its column, is singular, as in the
// sparse mode. The mode is invisible to callers except in Stats and in the
// last bits of the results.
//
// The rule comes from measurements of a refactorisation and a solve in both
// modes (amd64, Go 1.26): band mode was about twice as fast on a
// tridiagonal matrix of order 8 to 41 (ratio of band storage to entries
// 1.4), on a 41-stage column's Jacobian and on the 800×800 Jacobian of a
// four-component column (ratio 0.7), 1.2 times on a block tridiagonal
// 800×800 matrix with 4×4 blocks (ratio 1.8), 1.4 to 1.8 times on random
// 400×400 bands of width 6+6 with ratios 3.2 and 2.0, as fast at ratio 4.8
// and 3.6 times slower at ratio 7.4.
package sparse

import "fmt"

// CSR is a sparse matrix in compressed sparse row form: the entries of row i
// are Val[RowPtr[i]:RowPtr[i+1]] in columns ColIdx[RowPtr[i]:RowPtr[i+1]].
// Column indices within a row need not be sorted but must not repeat.
type CSR struct {
	Rows, Cols int
	RowPtr     []int
	ColIdx     []int
	Val        []float64
}

// check panics when the matrix is not a well-formed CSR (a programming error).
func (a *CSR) check() {
	if a.Rows < 0 || a.Cols < 0 || len(a.RowPtr) != a.Rows+1 || a.RowPtr[0] != 0 {
		panic(fmt.Sprintf("sparse: bad CSR shape: %d×%d with %d row pointers", a.Rows, a.Cols, len(a.RowPtr)))
	}
	nnz := a.RowPtr[a.Rows]
	if len(a.ColIdx) < nnz || len(a.Val) < nnz {
		panic("sparse: CSR ColIdx or Val shorter than RowPtr says")
	}
	for i := range a.Rows {
		if a.RowPtr[i] > a.RowPtr[i+1] {
			panic("sparse: CSR RowPtr not increasing")
		}
		for _, j := range a.ColIdx[a.RowPtr[i]:a.RowPtr[i+1]] {
			if j < 0 || j >= a.Cols {
				panic(fmt.Sprintf("sparse: CSR row %d has column %d out of range", i, j))
			}
		}
	}
}

// Norm1 returns the 1-norm of the matrix: the largest column sum of
// absolute values.
func (a *CSR) Norm1() float64 {
	sums := make([]float64, a.Cols)
	for p, j := range a.ColIdx[:a.RowPtr[a.Rows]] {
		v := a.Val[p]
		if v < 0 {
			v = -v
		}
		sums[j] += v
	}
	m := 0.0
	for _, s := range sums {
		if s > m || s != s {
			m = s
		}
	}
	return m
}

// MulVec sets dst = A x. dst and x must not overlap.
func (a *CSR) MulVec(dst, x []float64) {
	if len(dst) != a.Rows || len(x) != a.Cols {
		panic("sparse: MulVec length mismatch")
	}
	for i := range a.Rows {
		s := 0.0
		for p := a.RowPtr[i]; p < a.RowPtr[i+1]; p++ {
			s += a.Val[p] * x[a.ColIdx[p]]
		}
		dst[i] = s
	}
}

// SingularError reports that no acceptable pivot was found for a column:
// the matrix is singular, structurally or numerically, and Col (an index of
// the original matrix) is the column, which is to say the unknown, where the
// elimination ran out. Row is the row of the best remaining candidate, or -1
// when the column had none left (structurally singular).
type SingularError struct {
	Col, Row   int
	Structural bool
}

func (e *SingularError) Error() string {
	if e.Structural {
		return fmt.Sprintf("sparse: matrix is structurally singular at column %d", e.Col)
	}
	return fmt.Sprintf("sparse: matrix is singular at column %d (row %d)", e.Col, e.Row)
}
