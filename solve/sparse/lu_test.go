package sparse

import (
	"errors"
	"math"
	"math/rand/v2"
	"testing"

	"gonum.org/v1/gonum/mat"
)

// fromDense builds a CSR from a dense matrix, keeping exact zeros out
// unless keep says otherwise.
func fromDense(d [][]float64, keep func(i, j int) bool) *CSR {
	n := len(d)
	a := &CSR{Rows: n, Cols: len(d[0]), RowPtr: []int{0}}
	for i, row := range d {
		for j, v := range row {
			if v != 0 || (keep != nil && keep(i, j)) {
				a.ColIdx = append(a.ColIdx, j)
				a.Val = append(a.Val, v)
			}
		}
		a.RowPtr = append(a.RowPtr, len(a.ColIdx))
	}
	return a
}

func toDense(a *CSR) *mat.Dense {
	d := mat.NewDense(a.Rows, a.Cols, nil)
	for i := range a.Rows {
		for p := a.RowPtr[i]; p < a.RowPtr[i+1]; p++ {
			d.Set(i, a.ColIdx[p], a.Val[p])
		}
	}
	return d
}

func randomSparse(rnd *rand.Rand, n int, density float64) [][]float64 {
	d := make([][]float64, n)
	for i := range d {
		d[i] = make([]float64, n)
		for j := range d[i] {
			if rnd.Float64() < density {
				d[i][j] = rnd.NormFloat64()
			}
		}
	}
	// a shuffled diagonal of larger entries keeps it non-singular with high
	// probability, without favouring the natural diagonal
	for i, j := range rnd.Perm(n) {
		d[i][j] += 2 + rnd.Float64()
	}
	return d
}

func tridiag(n int) [][]float64 {
	d := make([][]float64, n)
	for i := range d {
		d[i] = make([]float64, n)
		d[i][i] = -2.5 - 0.01*float64(i)
		if i > 0 {
			d[i][i-1] = 1.1
		}
		if i < n-1 {
			d[i][i+1] = 1.3
		}
	}
	return d
}

// blockTridiag has nb diagonal blocks of size bs (dense, random) and dense
// random coupling blocks to the neighbours: a multicomponent column.
func blockTridiag(rnd *rand.Rand, nb, bs int) [][]float64 {
	n := nb * bs
	d := make([][]float64, n)
	for i := range d {
		d[i] = make([]float64, n)
	}
	for b := range nb {
		for i := range bs {
			for j := range bs {
				r := b*bs + i
				d[r][b*bs+j] = rnd.NormFloat64()
				if b > 0 {
					d[r][(b-1)*bs+j] = 0.3 * rnd.NormFloat64()
				}
				if b < nb-1 {
					d[r][(b+1)*bs+j] = 0.3 * rnd.NormFloat64()
				}
			}
			d[b*bs+i][b*bs+i] += 4
		}
	}
	return d
}

// withBorder adds a dense last row and column to d (a global unknown, such
// as a vapour fraction, in every balance): the matrix is then no longer
// banded in any order, and is factored in sparse mode.
func withBorder(rnd *rand.Rand, d [][]float64) [][]float64 {
	n := len(d) + 1
	out := make([][]float64, n)
	for i := range out {
		out[i] = make([]float64, n)
		if i < n-1 {
			copy(out[i], d[i])
		}
	}
	for i := range n - 1 {
		out[i][n-1] = 0.2 * rnd.NormFloat64()
		out[n-1][i] = 0.2 * rnd.NormFloat64()
	}
	out[n-1][n-1] = 5
	return out
}

// permutedDiag is a diagonal matrix with its rows shuffled: every natural
// diagonal entry is zero.
func permutedDiag(rnd *rand.Rand, n int) [][]float64 {
	perm := rnd.Perm(n)
	d := make([][]float64, n)
	for i := range d {
		d[i] = make([]float64, n)
		d[i][perm[i]] = float64(i + 1)
	}
	return d
}

// checkSolve compares Solve, SolveTrans and SolveMany with gonum's dense LU.
func checkSolve(t *testing.T, name string, a *CSR, opts *Options, rnd *rand.Rand) *LU {
	t.Helper()
	f, err := Factorize(a, opts)
	if err != nil {
		t.Fatalf("%s: Factorize: %v", name, err)
	}
	var dlu mat.LU
	dlu.Factorize(toDense(a))
	n := a.Rows
	b := make([]float64, n)
	for i := range b {
		b[i] = rnd.NormFloat64()
	}
	bcopy := append([]float64(nil), b...)
	for _, trans := range []bool{false, true} {
		got := make([]float64, n)
		for i := range got {
			got[i] = math.NaN()
		}
		if trans {
			f.SolveTrans(got, b)
		} else {
			f.Solve(got, b)
		}
		var want mat.VecDense
		if err := dlu.SolveVecTo(&want, trans, mat.NewVecDense(n, append([]float64(nil), b...))); err != nil {
			t.Fatalf("%s: dense solve: %v", name, err)
		}
		tol := 1e-10 * (1 + mat.Norm(&want, math.Inf(1)))
		for i := range got {
			if math.Abs(got[i]-want.AtVec(i)) > tol {
				t.Fatalf("%s (trans %v): x[%d] = %v, dense LU gives %v", name, trans, i, got[i], want.AtVec(i))
			}
		}
	}
	for i := range b {
		if b[i] != bcopy[i] {
			t.Fatalf("%s: b modified", name)
		}
	}
	// many right-hand sides, solved in place
	many := [][]float64{append([]float64(nil), b...), make([]float64, n)}
	many[1][0] = 1
	f.SolveMany(many, many, false)
	ax := make([]float64, n)
	a.MulVec(ax, many[0])
	for i := range ax {
		if math.Abs(ax[i]-b[i]) > 1e-9*(1+math.Abs(b[i])) {
			t.Fatalf("%s: SolveMany residual %v at %d", name, ax[i]-b[i], i)
		}
	}
	return f
}

func TestSolveAgainstDense(t *testing.T) {
	rnd := rand.New(rand.NewPCG(1, 2))
	for trial := range 60 {
		n := 1 + rnd.IntN(60)
		a := fromDense(randomSparse(rnd, n, 0.1), nil)
		for _, ord := range []Ordering{RCM, Natural} {
			checkSolve(t, "random", a, &Options{Order: ord}, rnd)
		}
		_ = trial
	}
	// banded: both modes
	for _, opts := range []*Options{nil, {sparseOnly: true}} {
		checkSolve(t, "tridiagonal 41", fromDense(tridiag(41), nil), opts, rnd)
		checkSolve(t, "block tridiagonal 50x4", fromDense(blockTridiag(rnd, 50, 4), nil), opts, rnd)
		checkSolve(t, "block tridiagonal 200x4", blockTridiag200x4(), opts, rnd)
	}
	checkSolve(t, "bordered block tridiagonal 30x3", fromDense(withBorder(rnd, blockTridiag(rnd, 30, 3)), nil), nil, rnd)
	checkSolve(t, "permuted diagonal", fromDense(permutedDiag(rnd, 30), nil), nil, rnd)
	checkSolve(t, "1x1", fromDense([][]float64{{-3}}, nil), nil, rnd)
}

// TestPivoting factors matrices whose diagonal is zero or tiny, so that the
// natural order must pivot.
func TestPivoting(t *testing.T) {
	rnd := rand.New(rand.NewPCG(3, 4))
	zeroDiag := [][]float64{{0, 1, 0}, {1, 0, 2}, {0, 3, 1}}
	keepDiag := func(i, j int) bool { return i == j } // structural zeros on the diagonal
	for _, ord := range []Ordering{RCM, Natural} {
		checkSolve(t, "zero diagonal", fromDense(zeroDiag, keepDiag), &Options{Order: ord}, rnd)
		checkSolve(t, "tiny diagonal", fromDense([][]float64{{1e-12, 1}, {1, 1}}, nil), &Options{Order: ord, Tau: 1}, rnd)
	}
}

func TestSingular(t *testing.T) {
	tests := []struct {
		name       string
		d          [][]float64
		col        int
		structural bool
	}{
		{"zero column", [][]float64{{1, 0, 2}, {3, 0, 4}, {0, 0, 5}}, 1, true},
		{"equal rows", [][]float64{{1, 2}, {1, 2}}, -1, false},
		{"dependent columns", [][]float64{{1, 2, 0}, {2, 4, 0}, {0, 0, 1}}, -1, false},
		{"all zero values", [][]float64{{0, 0}, {0, 0}}, -1, false},
		// The Jacobian of x*x + u = 0, y - x - v = 0 at x = 0: the only
		// candidate left for the second pivot is a zero reached through L.
		{"zero reached through L", [][]float64{{0, 0}, {-1, 1}}, -1, false},
	}
	for _, tt := range tests {
		a := fromDense(tt.d, func(i, j int) bool {
			return tt.name == "all zero values" || (tt.name == "zero reached through L" && i == 0 && j == 0)
		})
		_, err := Factorize(a, nil)
		var se *SingularError
		if !errors.As(err, &se) {
			t.Errorf("%s: error %v, want *SingularError", tt.name, err)
			continue
		}
		if tt.col >= 0 && se.Col != tt.col {
			t.Errorf("%s: Col = %d, want %d", tt.name, se.Col, tt.col)
		}
		if se.Structural != tt.structural {
			t.Errorf("%s: Structural = %v, want %v (%v)", tt.name, se.Structural, tt.structural, err)
		}
	}
}

// TestRefactor reuses the symbolic analysis: new values with the same
// pattern keep the pivots; values that break a kept pivot fall back to a
// fresh factorisation; a new pattern is analysed anew.
//
// The matrix has a border, so that it is factored in sparse mode (band mode
// chooses its pivots at every factorisation).
func TestRefactor(t *testing.T) {
	rnd := rand.New(rand.NewPCG(5, 6))
	a := fromDense(withBorder(rnd, blockTridiag(rnd, 20, 3)), nil)
	f := checkSolve(t, "first", a, nil, rnd)
	if f.banded {
		t.Fatal("bordered matrix factored in band mode")
	}
	for i := range a.Val {
		a.Val[i] *= 1 + 0.01*rnd.NormFloat64()
	}
	if err := f.Refactor(a); err != nil {
		t.Fatal(err)
	}
	if _, _, fresh, kept := f.Stats(); fresh != 1 || kept != 1 {
		t.Errorf("after a small change: fresh %d kept %d, want 1 and 1", fresh, kept)
	}
	checkAgainst(t, "refactored", f, a, rnd)

	// Make the first pivot tiny: the kept sequence must fail and a fresh
	// factorisation take over.
	col := f.q[0]
	row := f.p[0]
	for p := a.RowPtr[row]; p < a.RowPtr[row+1]; p++ {
		if a.ColIdx[p] == col {
			a.Val[p] = 1e-9
		}
	}
	if err := f.Refactor(a); err != nil {
		t.Fatal(err)
	}
	if _, _, fresh, _ := f.Stats(); fresh != 2 {
		t.Errorf("after breaking a pivot: %d fresh factorisations, want 2", fresh)
	}
	checkAgainst(t, "re-pivoted", f, a, rnd)

	b := fromDense(tridiag(7), nil)
	if err := f.Refactor(b); err != nil {
		t.Fatal(err)
	}
	checkAgainst(t, "new pattern", f, b, rnd)
}

func checkAgainst(t *testing.T, name string, f *LU, a *CSR, rnd *rand.Rand) {
	t.Helper()
	n := a.Rows
	x := make([]float64, n)
	for i := range x {
		x[i] = rnd.NormFloat64()
	}
	b := make([]float64, n)
	a.MulVec(b, x)
	got := make([]float64, n)
	f.Solve(got, b)
	for i := range x {
		if math.Abs(got[i]-x[i]) > 1e-9*(1+math.Abs(x[i])) {
			t.Fatalf("%s: x[%d] = %v, want %v", name, i, got[i], x[i])
		}
	}
}

// TestCond1 checks the Hager/Higham estimate against the exact 1-norm
// condition number from a dense inverse: a lower bound, within a factor 3.
func TestCond1(t *testing.T) {
	rnd := rand.New(rand.NewPCG(7, 8))
	cases := []*CSR{
		fromDense(tridiag(41), nil),
		fromDense(blockTridiag(rnd, 10, 4), nil),
		fromDense([][]float64{{1, 1}, {1, 1 + 1e-8}}, nil),
	}
	for trial := range 20 {
		cases = append(cases, fromDense(randomSparse(rnd, 5+trial, 0.2), nil))
	}
	for i, a := range cases {
		f, err := Factorize(a, nil)
		if err != nil {
			t.Fatal(err)
		}
		var inv mat.Dense
		if err := inv.Inverse(toDense(a)); err != nil && !errors.As(err, new(mat.Condition)) {
			t.Fatal(err)
		}
		exact := mat.Norm(toDense(a), 1) * mat.Norm(&inv, 1)
		est := f.Cond1()
		if est > exact*(1+1e-8) || est < exact/3 {
			t.Errorf("case %d: Cond1 = %.6g, exact %.6g", i, est, exact)
		}
	}
}

func TestOrderIsPermutation(t *testing.T) {
	rnd := rand.New(rand.NewPCG(9, 10))
	for range 20 {
		n := 1 + rnd.IntN(40)
		a := fromDense(randomSparse(rnd, n, 0.05), nil)
		q, _ := order(a, RCM)
		seen := make([]bool, n)
		for _, c := range q {
			if seen[c] {
				t.Fatalf("column %d twice in order %v", c, q)
			}
			seen[c] = true
		}
		if len(q) != n {
			t.Fatalf("order has %d of %d columns", len(q), n)
		}
	}
}

// TestFillTridiagonal: on a tridiagonal matrix the order must not create
// fill beyond the band (L and U hold n-1 off-diagonals each).
//
// In sparse mode; band mode must find the band kl = ku = 1.
func TestFillTridiagonal(t *testing.T) {
	d := tridiag(41)
	// shuffle the columns: the order has to find the band again
	rnd := rand.New(rand.NewPCG(11, 12))
	perm := rnd.Perm(41)
	sh := make([][]float64, 41)
	for i := range sh {
		sh[i] = make([]float64, 41)
		for j := range sh[i] {
			sh[i][perm[j]] = d[i][j]
		}
	}
	f, err := Factorize(fromDense(sh, nil), &Options{sparseOnly: true})
	if err != nil {
		t.Fatal(err)
	}
	if l, u, _, _ := f.Stats(); l > 40 || u > 81 {
		t.Errorf("tridiagonal 41: nnz(L) = %d, nnz(U) = %d; want at most 40 and 81", l, u)
	}
	f, err = Factorize(fromDense(sh, nil), nil)
	if err != nil {
		t.Fatal(err)
	}
	if !f.banded || f.bd.kl != 1 || f.bd.ku != 1 {
		t.Errorf("shuffled tridiagonal 41: band mode %v, kl %d, ku %d; want band mode with 1 and 1", f.banded, f.bd.kl, f.bd.ku)
	}
	// the stored band: 40 multipliers; U's diagonal and kl+ku = 2
	// superdiagonals, 1 + 2 + 39·3 entries
	if l, u, _, _ := f.Stats(); l != 40 || u != 120 {
		t.Errorf("tridiagonal 41 in band mode: nnz(L) = %d, nnz(U) = %d; want 40 and 120", l, u)
	}
}

// TestRefactorAfterSingular: a failed factorisation leaves no pivots to
// keep; the next Refactor with good values factors afresh.
func TestRefactorAfterSingular(t *testing.T) {
	a := fromDense([][]float64{{1, 2}, {2, 4}}, nil)
	f, err := Factorize(a, nil)
	if err == nil {
		t.Fatal("want a singular error")
	}
	a.Val[3] = 5
	if err := f.Refactor(a); err != nil {
		t.Fatal(err)
	}
	checkAgainst(t, "after singular", f, a, rand.New(rand.NewPCG(1, 1)))
}

// TestCopyFrom: a copy refactors and solves to the same bits as the
// original, into reused storage, and copying nil empties the LU.
//
// In sparse mode (the matrix has a border); band mode in TestBandCopyFrom.
func TestCopyFrom(t *testing.T) {
	rnd := rand.New(rand.NewPCG(7, 8))
	a := fromDense(withBorder(rnd, blockTridiag(rnd, 12, 3)), nil)
	src, err := Factorize(a, nil)
	if err != nil {
		t.Fatal(err)
	}
	if src.banded {
		t.Fatal("bordered matrix factored in band mode")
	}
	other, err := Factorize(fromDense(tridiag(5), nil), nil) // storage of another shape
	if err != nil {
		t.Fatal(err)
	}
	other.CopyFrom(src)
	for i := range a.Val {
		a.Val[i] *= 1 + 0.01*rnd.NormFloat64()
	}
	if err := src.Refactor(a); err != nil {
		t.Fatal(err)
	}
	if err := other.Refactor(a); err != nil {
		t.Fatal(err)
	}
	if _, _, fresh, kept := other.Stats(); fresh != 0 || kept != 1 {
		t.Errorf("the copy chose pivots afresh (fresh %d, kept %d), want the source's kept", fresh, kept)
	}
	b := make([]float64, a.Rows)
	for i := range b {
		b[i] = rnd.NormFloat64()
	}
	x1, x2 := make([]float64, a.Rows), make([]float64, a.Rows)
	src.Solve(x1, b)
	other.Solve(x2, b)
	for i := range x1 {
		if math.Float64bits(x1[i]) != math.Float64bits(x2[i]) {
			t.Fatalf("x[%d]: copy %v, source %v", i, x2[i], x1[i])
		}
	}
	other.CopyFrom(nil)
	if err := other.Refactor(a); err != nil {
		t.Fatal(err)
	}
	if _, _, fresh, _ := other.Stats(); fresh != 1 {
		t.Errorf("after copying nil: %d fresh factorisations, want 1", fresh)
	}
}

// TestRefactorValues: refactoring by values alone gives Refactor's bits,
// keeping the pivots, and falls back to fresh pivots the same way; in band
// mode both factor afresh each time.
func TestRefactorValues(t *testing.T) {
	rnd := rand.New(rand.NewPCG(9, 10))
	for _, tc := range []struct {
		name   string
		a      *CSR
		banded bool
	}{
		{"band", fromDense(blockTridiag(rnd, 15, 2), nil), true},
		{"sparse", fromDense(withBorder(rnd, blockTridiag(rnd, 15, 2)), nil), false},
	} {
		t.Run(tc.name, func(t *testing.T) { testRefactorValues(t, rnd, tc.a, tc.banded) })
	}
}

func testRefactorValues(t *testing.T, rnd *rand.Rand, a *CSR, banded bool) {
	f1, err := Factorize(a, nil)
	if err != nil {
		t.Fatal(err)
	}
	if f1.banded != banded {
		t.Fatalf("band mode %v, want %v", f1.banded, banded)
	}
	f2 := new(LU)
	f2.CopyFrom(f1)
	for round, scale := range []float64{0.01, 0.01, 3} {
		for i := range a.Val {
			a.Val[i] *= 1 + scale*rnd.NormFloat64()
		}
		err1, err2 := f1.Refactor(a), f2.RefactorValues(a.Val)
		if (err1 == nil) != (err2 == nil) {
			t.Fatalf("round %d: Refactor %v, RefactorValues %v", round, err1, err2)
		}
		if err1 != nil {
			continue
		}
		b := make([]float64, a.Rows)
		for i := range b {
			b[i] = rnd.NormFloat64()
		}
		x1, x2 := make([]float64, a.Rows), make([]float64, a.Rows)
		f1.Solve(x1, b)
		f2.Solve(x2, b)
		for i := range x1 {
			if math.Float64bits(x1[i]) != math.Float64bits(x2[i]) {
				t.Fatalf("round %d, x[%d]: by values %v, Refactor %v", round, i, x2[i], x1[i])
			}
		}
		_, _, fr1, k1 := f1.Stats()
		_, _, fr2, k2 := f2.Stats()
		if fr1-1 != fr2 || k1 != k2 { // f1 counts its first factorisation
			t.Errorf("round %d: fresh/kept %d/%d by values, %d/%d by Refactor", round, fr2, k2, fr1, k1)
		}
	}
}
