package jacobian

import (
	"sort"

	"gonum.org/v1/gonum/mat"
)

// Sparse is a compressed-sparse-row matrix: the entries of row i are
// ColIdx[RowPtr[i]:RowPtr[i+1]] (sorted increasing) with values
// Val[RowPtr[i]:RowPtr[i+1]]. A pattern has Val nil.
type Sparse struct {
	Rows, Cols int
	RowPtr     []int // len Rows+1
	ColIdx     []int // len RowPtr[Rows]
	Val        []float64
}

// NNZ returns the number of stored entries.
func (s *Sparse) NNZ() int { return s.RowPtr[s.Rows] }

// Row returns the column indices and values of row i, sharing storage with s.
// vals is nil when s is a pattern.
func (s *Sparse) Row(i int) (cols []int, vals []float64) {
	lo, hi := s.RowPtr[i], s.RowPtr[i+1]
	if s.Val != nil {
		vals = s.Val[lo:hi]
	}
	return s.ColIdx[lo:hi], vals
}

// At returns element (i, j): 0 when (i, j) is not stored, and 1 for a stored
// entry of a pattern (Val nil). It panics when i or j is out of range.
func (s *Sparse) At(i, j int) float64 {
	if i < 0 || i >= s.Rows || j < 0 || j >= s.Cols {
		panic("jacobian: index out of range")
	}
	lo, hi := s.RowPtr[i], s.RowPtr[i+1]
	k := lo + sort.SearchInts(s.ColIdx[lo:hi], j)
	if k == hi || s.ColIdx[k] != j {
		return 0
	}
	if s.Val == nil {
		return 1
	}
	return s.Val[k]
}

// Dense returns s as a dense matrix, for tests and small systems. A pattern
// (Val nil) gives 1 at every stored entry. A matrix with no rows or no
// columns gives an empty (zero-value) mat.Dense.
func (s *Sparse) Dense() *mat.Dense {
	if s.Rows == 0 || s.Cols == 0 {
		return &mat.Dense{}
	}
	d := mat.NewDense(s.Rows, s.Cols, nil)
	for i := 0; i < s.Rows; i++ {
		for k := s.RowPtr[i]; k < s.RowPtr[i+1]; k++ {
			v := 1.0
			if s.Val != nil {
				v = s.Val[k]
			}
			d.Set(i, s.ColIdx[k], v)
		}
	}
	return d
}

// clone copies the structure of s; with vals it allocates Val.
func (s *Sparse) clone(vals bool) *Sparse {
	c := &Sparse{
		Rows:   s.Rows,
		Cols:   s.Cols,
		RowPtr: append([]int(nil), s.RowPtr...),
		ColIdx: append([]int(nil), s.ColIdx...),
	}
	if vals {
		c.Val = make([]float64, len(s.ColIdx))
	}
	return c
}
