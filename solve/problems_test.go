package solve

import (
	"math"
)

// testProblem builds a Problem from a residual and an entry-wise Jacobian
// over a given pattern: enough for Go-written test problems.
func testProblem(pattern [][]int, res func(f, x []float64), jac func(i, j int, x []float64) float64) *Problem {
	n := len(pattern)
	p := &Problem{N: n, RowPtr: []int{0}}
	for _, row := range pattern {
		p.ColIdx = append(p.ColIdx, row...)
		p.RowPtr = append(p.RowPtr, len(p.ColIdx))
	}
	check := func(f []float64) error {
		for i, v := range f {
			if math.IsNaN(v) || math.IsInf(v, 0) {
				return &evalErr{i}
			}
		}
		return nil
	}
	p.Residual = func(f, x []float64) error {
		res(f, x)
		return check(f)
	}
	p.ResidualJacobian = func(f, jval, x []float64) error {
		res(f, x)
		for i := range n {
			for k := p.RowPtr[i]; k < p.RowPtr[i+1]; k++ {
				jval[k] = jac(i, p.ColIdx[k], x)
			}
		}
		return check(f)
	}
	return p
}

type evalErr struct{ eq int }

func (e *evalErr) Error() string { return "residual not finite" }

// binaryColumn is the constant-molar-overflow binary column of
// model-format.md's indexed example (stage 1 reboiler, stage nt total
// condenser, saturated-liquid feed on stage nf). Unknown i-1 is x[i].
type binaryColumn struct {
	nt, nf             int
	alpha, F, zF, L, V float64
}

// columnA is column A: /work/shared/checkvalues.md §2a (COLA), with the
// companion code's reflux and boilup.
var columnA = binaryColumn{nt: 41, nf: 21, alpha: 1.5, F: 1, zF: 0.5, L: 2.70629, V: 3.20629}

func (c binaryColumn) problem() *Problem {
	n := c.nt
	pattern := make([][]int, n)
	for i := range n {
		for j := i - 1; j <= i+1; j++ {
			if j >= 0 && j < n {
				pattern[i] = append(pattern[i], j)
			}
		}
	}
	y := func(x float64) float64 { return c.alpha * x / (1 + (c.alpha-1)*x) }
	dy := func(x float64) float64 { d := 1 + (c.alpha-1)*x; return c.alpha / (d * d) }
	lliq := func(stage int) float64 { // stage counted from 1
		if stage > c.nf {
			return c.L
		}
		return c.L + c.F
	}
	D := c.V - c.L
	B := c.F + c.L - c.V
	res := func(f, x []float64) {
		// x[k] is stage k+1
		f[0] = lliq(2)*x[1] - c.V*y(x[0]) - B*x[0]
		for st := 2; st <= n-1; st++ {
			k := st - 1
			feed := 0.0
			if st == c.nf {
				feed = c.F * c.zF
			}
			f[k] = lliq(st+1)*x[k+1] + c.V*y(x[k-1]) + feed - lliq(st)*x[k] - c.V*y(x[k])
		}
		f[n-1] = c.V*y(x[n-2]) - (c.L+D)*x[n-1]
	}
	jac := func(i, j int, x []float64) float64 {
		st := i + 1
		switch {
		case i == 0 && j == 0:
			return -c.V*dy(x[0]) - B
		case i == 0 && j == 1:
			return lliq(2)
		case i == n-1 && j == n-2:
			return c.V * dy(x[n-2])
		case i == n-1 && j == n-1:
			return -(c.L + D)
		case j == i+1:
			return lliq(st + 1)
		case j == i-1:
			return c.V * dy(x[j])
		default:
			return -lliq(st) - c.V*dy(x[i])
		}
	}
	p := testProblem(pattern, res, jac)
	p.Lower, p.Upper = make([]float64, n), make([]float64, n)
	for i := range n {
		p.Lower[i], p.Upper[i] = 0, 1
		p.VarNames = append(p.VarNames, "x["+itoa(i+1)+"]")
	}
	p.EqNames = append(p.EqNames, "reboiler")
	for st := 2; st <= n-1; st++ {
		p.EqNames = append(p.EqNames, "tray["+itoa(st)+"]")
	}
	p.EqNames = append(p.EqNames, "condenser")
	return p
}

// multiColumn is a constant-molar-overflow column with nc components of
// constant relative volatility: an invented benchmark. Unknown
// (stage-1)*nc + c is the liquid mole fraction of component c on the stage;
// every component balance is written, y_c = alpha_c x_c / Σ alpha_k x_k.
type multiColumn struct {
	nt, nf, nc int
	alpha, zF  []float64
	F, L, V    float64
}

var column200x4 = multiColumn{nt: 200, nf: 100, nc: 4,
	alpha: []float64{1.6, 1.35, 1.15, 1}, zF: []float64{0.25, 0.25, 0.25, 0.25},
	F: 1, L: 3, V: 3.5}

func (c multiColumn) problem() *Problem {
	nt, nc := c.nt, c.nc
	n := nt * nc
	pattern := make([][]int, n)
	for st := range nt {
		for cc := range nc {
			i := st*nc + cc
			for s2 := st - 1; s2 <= st+1; s2++ {
				if s2 < 0 || s2 >= nt {
					continue
				}
				for k := range nc {
					pattern[i] = append(pattern[i], s2*nc+k)
				}
			}
		}
	}
	lliq := func(st int) float64 { // st from 0; feed on stage index nf-1 (saturated liquid)
		if st >= c.nf {
			return c.L
		}
		return c.L + c.F
	}
	D := c.V - c.L
	B := c.F + c.L - c.V
	ys := make([]float64, n)
	vap := func(x []float64) {
		for st := range nt {
			s := 0.0
			for k := range nc {
				s += c.alpha[k] * x[st*nc+k]
			}
			for k := range nc {
				ys[st*nc+k] = c.alpha[k] * x[st*nc+k] / s
			}
		}
	}
	res := func(f, x []float64) {
		vap(x)
		for st := range nt {
			for k := range nc {
				i := st*nc + k
				switch st {
				case 0: // reboiler
					f[i] = lliq(1)*x[i+nc] - c.V*ys[i] - B*x[i]
				case nt - 1: // total condenser
					f[i] = c.V*ys[i-nc] - (c.L+D)*x[i]
				default:
					feed := 0.0
					if st == c.nf-1 {
						feed = c.F * c.zF[k]
					}
					f[i] = lliq(st+1)*x[i+nc] + c.V*ys[i-nc] + feed - lliq(st)*x[i] - c.V*ys[i]
				}
			}
		}
	}
	// dy_k/dx_m on one stage: alpha_k(δ_km S - x_k alpha_m)/S²
	dy := func(x []float64, st, k, m int) float64 {
		s := 0.0
		for q := range nc {
			s += c.alpha[q] * x[st*nc+q]
		}
		v := -c.alpha[k] * x[st*nc+k] * c.alpha[m] / (s * s)
		if k == m {
			v += c.alpha[k] / s
		}
		return v
	}
	jac := func(i, j int, x []float64) float64 {
		st, k := i/nc, i%nc
		s2, m := j/nc, j%nc
		v := 0.0
		switch st {
		case 0:
			if s2 == 1 && m == k {
				v += lliq(1)
			}
			if s2 == 0 {
				v -= c.V * dy(x, 0, k, m)
				if m == k {
					v -= B
				}
			}
		case nt - 1:
			if s2 == nt-2 {
				v += c.V * dy(x, nt-2, k, m)
			}
			if s2 == nt-1 && m == k {
				v -= c.L + D
			}
		default:
			switch s2 {
			case st + 1:
				if m == k {
					v += lliq(st + 1)
				}
			case st - 1:
				v += c.V * dy(x, st-1, k, m)
			case st:
				v -= c.V * dy(x, st, k, m)
				if m == k {
					v -= lliq(st)
				}
			}
		}
		return v
	}
	p := testProblem(pattern, res, jac)
	p.Lower, p.Upper = make([]float64, n), make([]float64, n)
	for i := range n {
		p.Lower[i], p.Upper[i] = 0, 1
	}
	return p
}

func itoa(i int) string {
	if i < 10 {
		return string(rune('0' + i))
	}
	return itoa(i/10) + string(rune('0'+i%10))
}
