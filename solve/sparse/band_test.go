package sparse

import (
	"errors"
	"math"
	"math/rand/v2"
	"testing"

	"gonum.org/v1/gonum/mat"
)

// randomBand is an n×n matrix with random entries in the band kl below and
// ku above the diagonal, each present with probability density (the
// outermost diagonals always somewhere), its rows shuffled, and its columns
// too when shuffleCols: the order has to find the band again. Diagonal
// entries may be small, so that the factorisation has to pivot.
func randomBand(rnd *rand.Rand, n, kl, ku int, density float64, shuffleCols bool) [][]float64 {
	d := make([][]float64, n)
	for i := range d {
		d[i] = make([]float64, n)
	}
	for i := range n {
		for j := max(0, i-kl); j <= min(n-1, i+ku); j++ {
			if i == j || rnd.Float64() < density {
				d[i][j] = rnd.NormFloat64()
			}
		}
	}
	if kl > 0 {
		d[kl][0] = 1 + rnd.Float64()
	}
	if ku > 0 {
		d[0][ku] = 1 + rnd.Float64()
	}
	rp, cp := rnd.Perm(n), rnd.Perm(n)
	if !shuffleCols {
		for j := range cp {
			cp[j] = j
		}
	}
	out := make([][]float64, n)
	for i := range out {
		out[i] = make([]float64, n)
	}
	for i := range n {
		for j := range n {
			out[rp[i]][cp[j]] = d[i][j]
		}
	}
	return out
}

// TestBandChoice: which matrices are factored in band mode, and with what
// band (the rule is in the package documentation).
func TestBandChoice(t *testing.T) {
	rnd := rand.New(rand.NewPCG(21, 22))
	zeroCol := tridiag(12)
	for i := range zeroCol {
		zeroCol[i][5] = 0
	}
	tests := []struct {
		name   string
		a      *CSR
		banded bool
		kl, ku int // -1: not checked
	}{
		{"tridiagonal 41", fromDense(tridiag(41), nil), true, 1, 1},
		{"tridiagonal 7: too small", fromDense(tridiag(7), nil), false, -1, -1},
		{"block tridiagonal 50x4", fromDense(blockTridiag(rnd, 50, 4), nil), true, 7, 7},
		{"block tridiagonal 10x4", fromDense(blockTridiag(rnd, 10, 4), nil), true, 7, 7},
		{"pentadiagonal 60, rows shuffled", fromDense(randomBand(rnd, 60, 2, 2, 1, false), nil), true, 2, 2},
		{"band 3/1 80, rows shuffled", fromDense(randomBand(rnd, 80, 3, 1, 1, false), nil), true, 3, 1},
		// RCM after the matching does not find the narrowest band of a
		// shuffled matrix, but a band all the same
		{"pentadiagonal 60, shuffled", fromDense(randomBand(rnd, 60, 2, 2, 1, true), nil), true, -1, -1},
		{"bordered block tridiagonal", fromDense(withBorder(rnd, blockTridiag(rnd, 20, 3)), nil), false, -1, -1},
		{"random sparse 60", fromDense(randomSparse(rnd, 60, 0.1), nil), false, -1, -1},
		{"structurally singular", fromDense(zeroCol, nil), false, -1, -1},
	}
	for _, tt := range tests {
		f, _ := Factorize(tt.a, nil)
		if f.banded != tt.banded {
			t.Errorf("%s: band mode %v, want %v (kl %d, ku %d)", tt.name, f.banded, tt.banded, f.bd.kl, f.bd.ku)
			continue
		}
		if tt.kl >= 0 && (f.bd.kl != tt.kl || f.bd.ku != tt.ku) {
			t.Errorf("%s: kl %d, ku %d; want %d and %d", tt.name, f.bd.kl, f.bd.ku, tt.kl, tt.ku)
		}
	}
}

// TestBandAgainstDense: band mode solves as gonum's dense LU does, for
// random bands of several widths, rows shuffled, with pivoting needed.
func TestBandAgainstDense(t *testing.T) {
	rnd := rand.New(rand.NewPCG(23, 24))
	ran := 0
	for trial := range 120 {
		n := 8 + rnd.IntN(70)
		kl, ku := rnd.IntN(5), rnd.IntN(5)
		d := randomBand(rnd, n, kl, ku, 0.7, false)
		a := fromDense(d, nil)
		var dense mat.LU
		dense.Factorize(toDense(a))
		if dense.Cond() > 1e5 {
			// a random band is often ill-conditioned, and checkSolve's
			// residual test is absolute
			continue
		}
		ran++
		f := checkSolve(t, "random band", a, nil, rnd)
		if !f.banded {
			t.Fatalf("trial %d: %d×%d band %d/%d factored in sparse mode", trial, n, n, kl, ku)
		}
		if kl == 0 && ku == 0 {
			continue
		}
		// Cond1 in band mode, against the exact value as in TestCond1.
		var inv mat.Dense
		if err := inv.Inverse(toDense(a)); err != nil {
			t.Fatal(err)
		}
		exact := mat.Norm(toDense(a), 1) * mat.Norm(&inv, 1)
		if est := f.Cond1(); est > exact*(1+1e-8) || est < exact/3 {
			t.Errorf("trial %d: Cond1 = %.6g, exact %.6g", trial, est, exact)
		}
	}
	if ran < 50 {
		t.Errorf("only %d of 120 random bands well enough conditioned to check", ran)
	}
}

// TestBandSingular: a column of zeros and two dependent columns inside the
// band give a *SingularError naming the caller's column.
func TestBandSingular(t *testing.T) {
	keepAll := func(i, j int) bool { return i-j <= 1 && j-i <= 1 }
	zero := tridiag(20)
	for i := range zero {
		zero[i][9] = 0 // kept in the pattern: zero values
	}
	// columns 12 and 13 proportional (rows 11..14 only have them both
	// within the band, and 11 and 14 are cleared for that)
	dep := tridiag(20)
	dep[11][12], dep[14][13] = 0, 0
	for i := 12; i <= 13; i++ {
		dep[i][13] = 2 * dep[i][12]
	}
	tests := []struct {
		name string
		d    [][]float64
		cols []int // acceptable columns
	}{
		{"zero column", zero, []int{9}},
		{"dependent columns", dep, []int{12, 13}},
	}
	for _, tt := range tests {
		a := fromDense(tt.d, keepAll)
		f, err := Factorize(a, nil)
		if !f.banded {
			t.Fatalf("%s: not factored in band mode", tt.name)
		}
		var se *SingularError
		if !errors.As(err, &se) {
			t.Fatalf("%s: error %v, want *SingularError", tt.name, err)
		}
		found := false
		for _, c := range tt.cols {
			found = found || se.Col == c
		}
		if !found || se.Structural {
			t.Errorf("%s: %+v, want column in %v, not structural", tt.name, *se, tt.cols)
		}
		// a good matrix with the same pattern factors again
		g := fromDense(tridiag(20), keepAll)
		if err := f.RefactorValues(g.Val); err != nil {
			t.Fatalf("%s: refactor with good values: %v", tt.name, err)
		}
		checkAgainst(t, tt.name+", refactored", f, g, rand.New(rand.NewPCG(1, 1)))
	}
	// A NaN is singular, not a panic nor a solution.
	a := fromDense(tridiag(20), nil)
	a.Val[7] = math.NaN()
	if _, err := Factorize(a, nil); !errors.As(err, new(*SingularError)) {
		t.Errorf("NaN entry: error %v, want *SingularError", err)
	}
}

// TestBandRefactor: Refactor after a change of values, and by values
// alone; every band factorisation counts as fresh.
func TestBandRefactor(t *testing.T) {
	rnd := rand.New(rand.NewPCG(25, 26))
	a := fromDense(blockTridiag(rnd, 30, 3), nil)
	f := checkSolve(t, "first", a, nil, rnd)
	if !f.banded {
		t.Fatal("not in band mode")
	}
	for round := range 3 {
		for i := range a.Val {
			a.Val[i] *= 1 + 0.5*rnd.NormFloat64()
		}
		var err error
		if round%2 == 0 {
			err = f.Refactor(a)
		} else {
			err = f.RefactorValues(a.Val)
		}
		if err != nil {
			t.Fatal(err)
		}
		checkAgainst(t, "refactored", f, a, rnd)
		if _, _, fresh, kept := f.Stats(); fresh != round+2 || kept != 0 {
			t.Errorf("round %d: fresh %d kept %d, want %d and 0", round, fresh, kept, round+2)
		}
	}
	// a new pattern, not banded: sparse mode
	b := fromDense(withBorder(rnd, blockTridiag(rnd, 10, 3)), nil)
	if err := f.Refactor(b); err != nil {
		t.Fatal(err)
	}
	if f.banded {
		t.Error("bordered matrix refactored in band mode")
	}
	checkAgainst(t, "new pattern", f, b, rnd)
	// and back to a band
	if err := f.Refactor(a); err != nil {
		t.Fatal(err)
	}
	if !f.banded {
		t.Error("band matrix refactored in sparse mode")
	}
	checkAgainst(t, "band again", f, a, rnd)
}

// TestBandCopyFrom: a copy of a band factorisation, into storage of another
// shape, refactors by values to the same bits as its source.
func TestBandCopyFrom(t *testing.T) {
	rnd := rand.New(rand.NewPCG(27, 28))
	a := fromDense(blockTridiag(rnd, 25, 2), nil)
	src, err := Factorize(a, nil)
	if err != nil {
		t.Fatal(err)
	}
	other, err := Factorize(fromDense(withBorder(rnd, tridiag(9)), nil), nil)
	if err != nil {
		t.Fatal(err)
	}
	other.CopyFrom(src)
	if !other.banded {
		t.Fatal("copy not in band mode")
	}
	b := make([]float64, a.Rows)
	for i := range b {
		b[i] = rnd.NormFloat64()
	}
	x1, x2 := make([]float64, a.Rows), make([]float64, a.Rows)
	same := func(what string) {
		t.Helper()
		src.Solve(x1, b)
		other.Solve(x2, b)
		for i := range x1 {
			if math.Float64bits(x1[i]) != math.Float64bits(x2[i]) {
				t.Fatalf("%s, x[%d]: copy %v, source %v", what, i, x2[i], x1[i])
			}
		}
	}
	same("copied")
	for i := range a.Val {
		a.Val[i] *= 1 + 0.1*rnd.NormFloat64()
	}
	if err := src.RefactorValues(a.Val); err != nil {
		t.Fatal(err)
	}
	if err := other.RefactorValues(a.Val); err != nil {
		t.Fatal(err)
	}
	same("refactored")
	checkAgainst(t, "copy refactored", other, a, rnd)
	if _, _, fresh, kept := other.Stats(); fresh != 1 || kept != 0 {
		t.Errorf("copy: fresh %d kept %d, want 1 and 0", fresh, kept)
	}
}

// TestBandNoAllocs: refactoring by values and solving with work space
// allocate nothing in band mode.
func TestBandNoAllocs(t *testing.T) {
	rnd := rand.New(rand.NewPCG(29, 30))
	for _, a := range []*CSR{fromDense(tridiag(41), nil), fromDense(blockTridiag(rnd, 20, 4), nil)} {
		f, err := Factorize(a, nil)
		if err != nil {
			t.Fatal(err)
		}
		if !f.banded {
			t.Fatal("not in band mode")
		}
		w, x := make([]float64, a.Rows), make([]float64, a.Rows)
		for i := range x {
			x[i] = 1
		}
		if n := testing.AllocsPerRun(20, func() {
			if err := f.RefactorValues(a.Val); err != nil {
				t.Fatal(err)
			}
		}); n != 0 {
			t.Errorf("RefactorValues: %v allocations", n)
		}
		if n := testing.AllocsPerRun(20, func() { f.SolveWith(w, x, x) }); n != 0 {
			t.Errorf("SolveWith: %v allocations", n)
		}
	}
}
