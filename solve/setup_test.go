package solve

import (
	"math"
	"reflect"
	"testing"
)

// TestResolveIntoCopiesEveryField: resolveInto copies Options field by
// field (no struct copy, for the write barrier); a field added to Options
// and not to resolveInto fails here.
func TestResolveIntoCopiesEveryField(t *testing.T) {
	rec := func(Iteration) {}
	o := Options{}
	v := reflect.ValueOf(&o).Elem()
	for i := range v.NumField() {
		switch f := v.Field(i); f.Kind() {
		case reflect.Int:
			f.SetInt(int64(7 + i))
		case reflect.Float64:
			f.SetFloat(float64(i) + 0.5)
		case reflect.Bool:
			f.SetBool(true)
		case reflect.Func:
			f.Set(reflect.ValueOf(rec))
		default:
			t.Fatalf("Options.%s: a kind resolveInto does not know", v.Type().Field(i).Name)
		}
	}
	var r Options
	r.Recorder = func(Iteration) {} // something to overwrite
	o.resolveInto(&r)
	rv := reflect.ValueOf(r)
	for i := range v.NumField() {
		a, b := v.Field(i), rv.Field(i)
		if a.Kind() == reflect.Func {
			if a.Pointer() != b.Pointer() {
				t.Errorf("Options.%s not copied", v.Type().Field(i).Name)
			}
			continue
		}
		if !a.Equal(b) {
			t.Errorf("Options.%s = %v, want %v", v.Type().Field(i).Name, b, a)
		}
	}
	(*Options)(nil).resolveInto(&r)
	if r.Recorder != nil || r.NoBlocks || r.NoHomotopy || r.MaxIter != 50 || r.FTol != 1e-10 || r.XTol != 1e-13 || r.HomotopySteps != 200 {
		t.Errorf("nil options resolve to %+v", r)
	}
}

// oldSetBounds is setBounds as it was written before it was tightened
// (one test of each condition, the margin taken for every unknown): the
// reference that the new one must match to the bit.
func oldSetBounds(lower, upper, typical, x []float64) (lo, hi, typs []float64) {
	n := len(x)
	lo, hi, typs = make([]float64, n), make([]float64, n), make([]float64, n)
	inf := math.Inf(1)
	for j, xj := range x {
		l, h := -inf, inf
		if lower != nil && !math.IsNaN(lower[j]) {
			l = lower[j]
		}
		if upper != nil && !math.IsNaN(upper[j]) {
			h = upper[j]
		}
		lo[j], hi[j] = l, h
		typ := 0.0
		if typical != nil && typical[j] > 0 && !math.IsInf(typical[j], 0) {
			typ = typical[j]
		}
		if typ == 0 && xj != 0 && !math.IsInf(xj, 0) && !math.IsNaN(xj) {
			typ = math.Abs(xj)
		}
		if typ == 0 {
			if !math.IsInf(l, 0) {
				typ = max(typ, math.Abs(l))
			}
			if !math.IsInf(h, 0) {
				typ = max(typ, math.Abs(h))
			}
		}
		if typ == 0 {
			typ = 1
		}
		typs[j] = typ
		if math.IsNaN(xj) || math.IsInf(xj, 0) {
			xj = 0
		}
		margin := 1e-8 * typ
		if w := h - l; w < inf {
			margin = min(margin, 0.01*w)
		}
		if xj <= l {
			xj = min(l+margin, l+0.5*(h-l))
		}
		if xj >= h {
			xj = max(h-margin, l+0.5*(h-l))
		}
		x[j] = xj
	}
	return lo, hi, typs
}

// TestSetBoundsMatchesReference compares setBounds with the reference on
// every combination of awkward values, bit for bit.
func TestSetBoundsMatchesReference(t *testing.T) {
	inf, nan := math.Inf(1), math.NaN()
	vals := []float64{0, 1, -1, 2.5, -3e-9, 1e300, inf, -inf, nan}
	var lower, upper, typical, x0 []float64
	for _, l := range vals {
		for _, h := range vals {
			for _, ty := range []float64{0, -1, 3, inf, nan} {
				for _, x := range vals {
					lower, upper, typical, x0 = append(lower, l), append(upper, h), append(typical, ty), append(x0, x)
				}
			}
		}
	}
	bits := func(a, b []float64) bool {
		for i := range a {
			if math.Float64bits(a[i]) != math.Float64bits(b[i]) {
				return false
			}
		}
		return true
	}
	n := len(x0)
	for _, c := range []struct {
		name       string
		lo, hi, ty []float64
	}{{"all", lower, upper, typical}, {"no bounds", nil, nil, typical}, {"no typical sizes", lower, upper, nil}, {"no upper", lower, nil, typical}} {
		s := &solver{n: n, prob: &Problem{N: n, Lower: c.lo, Upper: c.hi, Typical: c.ty},
			lo: make([]float64, n), hi: make([]float64, n), typ: make([]float64, n)}
		x, y := make([]float64, n), make([]float64, n)
		s.setBounds(x, y, x0)
		xr := append([]float64(nil), x0...)
		lo, hi, typs := oldSetBounds(c.lo, c.hi, c.ty, xr)
		if !bits(x, xr) || !bits(y, xr) || !bits(s.lo, lo) || !bits(s.hi, hi) || !bits(s.typ, typs) {
			for j := range x {
				if math.Float64bits(x[j]) != math.Float64bits(xr[j]) || math.Float64bits(s.typ[j]) != math.Float64bits(typs[j]) {
					t.Errorf("%s: unknown %d (lo %v hi %v typ %v x0 %v): x %v/%v typ %v/%v", c.name, j, lower[j], upper[j], typical[j], x0[j], x[j], xr[j], s.typ[j], typs[j])
					break
				}
			}
			t.Fatalf("%s: setBounds differs from the reference", c.name)
		}
		// x0 may be the point's own storage.
		xs := append([]float64(nil), x0...)
		s.setBounds(xs, y, xs)
		if !bits(xs, xr) {
			t.Fatalf("%s: with x0 = x, setBounds differs", c.name)
		}
	}
}
