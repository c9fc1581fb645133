package sparse

import "math"

// The factorisation of a matrix of order 2 in sparse mode, where the
// general loops of refactor and solve cost several times the arithmetic.
// refactor2 and solve2 are refactor and solveN written out for n = 2: the
// same operations on the same values in the same order, skipped where the
// general code skips them (entries outside the patterns of L and U, zero
// right-hand sides), so that their results are those of the general code
// to the bit (TestSmallPathsMatchGeneral compares them).
//
// With n = 2 the pattern is small enough to write out: column 0 of the
// elimination has no U entries above its pivot and at most one L entry
// (position 1) below; column 1 has at most one U entry (position 0) and no L
// entries.

// refactor2 is refactor for n = 2.
func (f *LU) refactor2(val []float64) error {
	cp, csrPos, rpos, cval := f.cp, f.csrPos, f.rpos, f.cval
	lp, up, li, ui := f.lp[:3], f.up[:3], f.li, f.ui
	q := f.q[:2]
	udiag := f.udiag[:2]
	hasL := lp[1] > lp[0] // L(1,0) is in the pattern
	if hasL && li[lp[0]] != 1 || lp[2] != lp[1] || up[1] != up[0] || up[2]-up[1] > 1 || up[2] > up[1] && ui[up[1]] != 0 {
		return f.refactor(val) // not the shape described above: cannot happen
	}
	hasU := up[2] > up[1] // U(0,1) is in the pattern

	// Column 0 of the elimination.
	var x [2]float64
	col := q[0]
	scale, sum := 0.0, 0.0
	c0, c1 := cp[col], cp[col+1]
	for pc := c0; pc < c1; pc++ {
		v := val[csrPos[pc]]
		cval[pc] = v
		x[rpos[pc]&1] = v
		scale = maxAbs(scale, v)
		sum += math.Abs(v)
	}
	anorm := 0.0
	if sum > anorm || math.IsNaN(sum) {
		anorm = sum
	}
	pivot := x[0]
	ap := math.Abs(pivot)
	amax := ap
	if hasL {
		amax = maxAbs(amax, x[1])
	}
	if !(ap >= f.tau*amax) || !(ap > tiny*maxAbs(scale, amax)) || ap > math.MaxFloat64 {
		return errPivot
	}
	udiag[0] = pivot
	var l10 float64
	if hasL {
		l10 = x[1] / pivot
		f.lx[lp[0]] = l10
	}

	// Column 1.
	x = [2]float64{}
	col = q[1]
	scale, sum = 0.0, 0.0
	c0, c1 = cp[col], cp[col+1]
	for pc := c0; pc < c1; pc++ {
		v := val[csrPos[pc]]
		cval[pc] = v
		x[rpos[pc]&1] = v
		scale = maxAbs(scale, v)
		sum += math.Abs(v)
	}
	if sum > anorm || math.IsNaN(sum) {
		anorm = sum
	}
	if hasU {
		xj := x[0]
		f.ux[up[1]] = xj
		scale = maxAbs(scale, xj)
		if hasL {
			x[1] -= l10 * xj
		}
	}
	pivot = x[1]
	ap = math.Abs(pivot)
	amax = ap
	if !(ap >= f.tau*amax) || !(ap > tiny*maxAbs(scale, amax)) || ap > math.MaxFloat64 {
		return errPivot
	}
	udiag[1] = pivot
	f.anorm = anorm
	return nil
}

// solve2 is solveN for n = 2.
func (f *LU) solve2(dst, b []float64) {
	p, q, lp, up, udiag := f.p[:2], f.q[:2], f.lp[:3], f.up[:3], f.udiag[:2]
	w0, w1 := b[p[0]], b[p[1]]
	if w0 != 0 {
		for pp := lp[0]; pp < lp[1]; pp++ { // at most one entry, at position 1
			w1 -= f.lx[pp] * w0
		}
	}
	w1 /= udiag[1]
	if w1 != 0 {
		for pp := up[1]; pp < up[2]; pp++ { // at most one entry, at position 0
			w0 -= f.ux[pp] * w1
		}
	}
	w0 /= udiag[0]
	dst[q[0]], dst[q[1]] = w0, w1
}
