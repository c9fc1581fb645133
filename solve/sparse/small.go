package sparse

import "math"

// The factorisation of a matrix of order 2 in sparse mode, where the
// general loops of refactor and solve cost several times the arithmetic.
// refactor2 and solve2 are refactor and solveN written out for n = 2: the
// same operations on the same values in the same order, skipped where the
// general code skips them (entries outside the patterns of L and U, zero
// right-hand sides), so that their results are those of the general code
// to the bit (TestSmallPathsMatchGeneral compares them). They read the
// places of the entries from a plan2 made with the pivots.
//
// With n = 2 the pattern is small enough to write out: column 0 of the
// elimination has no U entries above its pivot and at most one L entry
// (position 1) below; column 1 has at most one U entry (position 0) and no L
// entries.

// plan2 holds, for n = 2, where refactor2 and solve2 find what they need.
type plan2 struct {
	ok         bool
	hasL, hasU bool   // L(1,0) and U(0,1) are in the patterns
	l, u       int    // their places in lx and ux
	ne         [2]int // entries of A in column q[k] of the elimination
	src        [2][2]int
	pos        [2][2]int // their places in the CSR values and pivot positions, in CSC order
	p, q       [2]int
}

// plan2 makes f.two from the pivots and patterns of a sparse-mode
// factorisation of order 2; it leaves f.two.ok false when they are not of
// the shape described above (which does not happen).
func (f *LU) plan2() {
	t := plan2{}
	f.two = t
	if f.n != 2 || f.banded || len(f.p) != 2 || len(f.lp) != 3 || len(f.up) != 3 || len(f.rpos) != len(f.ri) {
		return
	}
	lp, up := f.lp, f.up
	if lp[0] != 0 || lp[2] != lp[1] || lp[1] > 1 || up[1] != 0 || up[2] > 1 {
		return
	}
	t.hasL, t.hasU = lp[1] == 1, up[2] == 1
	if t.hasL && f.li[0] != 1 || t.hasU && f.ui[0] != 0 {
		return
	}
	t.l, t.u = 0, 0
	for k := range 2 {
		col := f.q[k]
		c0, c1 := f.cp[col], f.cp[col+1]
		if c1-c0 > 2 || c1 <= c0 {
			return
		}
		t.ne[k] = c1 - c0
		for e := range c1 - c0 {
			t.src[k][e] = f.csrPos[c0+e]
			t.pos[k][e] = f.rpos[c0+e]
			if t.pos[k][e] != 0 && t.pos[k][e] != 1 {
				return
			}
		}
		t.p[k], t.q[k] = f.p[k], col
	}
	t.ok = true
	f.two = t
}

// refactor2 is refactor for n = 2, without the copy of the values in CSC
// order (cval), which only a fresh factorisation reads, after gather has
// written it again.
func (f *LU) refactor2(val []float64) error {
	t := &f.two
	if !t.ok {
		return f.refactor(val)
	}
	tau := f.tau

	// Column 0 of the elimination, its one or two entries written out. For
	// the first, maxAbs(0, v) and 0 + |v| are |v| to the bit (|v| is +0,
	// positive or NaN), and so is ||A||₁ so far (max(0, sum) as refactor
	// takes it: sum is not negative).
	var x [2]float64
	v := val[t.src[0][0]]
	x[t.pos[0][0]&1] = v
	scale := math.Abs(v)
	sum := scale
	if t.ne[0] == 2 {
		v := val[t.src[0][1]]
		x[t.pos[0][1]&1] = v
		scale = maxAbs(scale, v)
		sum += math.Abs(v)
	}
	anorm := sum
	pivot := x[0]
	ap := math.Abs(pivot)
	amax := ap
	if t.hasL {
		amax = maxAbs(amax, x[1])
	}
	if !(ap >= tau*amax) || !(ap > tiny*maxAbs(scale, amax)) || ap > math.MaxFloat64 {
		return errPivot
	}
	u00 := pivot
	var l10 float64
	if t.hasL {
		l10 = x[1] / pivot
	}

	// Column 1.
	x = [2]float64{}
	v = val[t.src[1][0]]
	x[t.pos[1][0]&1] = v
	scale = math.Abs(v)
	sum = scale
	if t.ne[1] == 2 {
		v := val[t.src[1][1]]
		x[t.pos[1][1]&1] = v
		scale = maxAbs(scale, v)
		sum += math.Abs(v)
	}
	if sum > anorm || math.IsNaN(sum) {
		anorm = sum
	}
	if t.hasU {
		xj := x[0]
		f.ux[t.u] = xj
		scale = maxAbs(scale, xj)
		if t.hasL {
			x[1] -= l10 * xj
		}
	}
	if t.hasL {
		f.lx[t.l] = l10
	}
	udiag := f.udiag[:2]
	udiag[0] = u00
	pivot = x[1]
	ap = math.Abs(pivot)
	amax = ap
	if !(ap >= tau*amax) || !(ap > tiny*maxAbs(scale, amax)) || ap > math.MaxFloat64 {
		return errPivot
	}
	udiag[1] = pivot
	f.anorm = anorm
	return nil
}

// solve2 is solveN for n = 2, for a factorisation with f.two.ok; dst and b
// have length 2.
func (f *LU) solve2(dst, b []float64) {
	// L(1,0) and U(0,1), when there, are the only entries of lx and ux
	// (plan2 sets f.two.l = f.two.u = 0).
	w0, w1 := b[f.two.p[0]], b[f.two.p[1]]
	if w0 != 0 && f.two.hasL {
		w1 -= f.lx[0] * w0
	}
	w1 /= f.udiag[1]
	if w1 != 0 && f.two.hasU {
		w0 -= f.ux[0] * w1
	}
	dst[f.two.q[0]], dst[f.two.q[1]] = w0/f.udiag[0], w1
}
