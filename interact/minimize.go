package interact

import (
	"math"
	"slices"
)

// The minimisers below serve MinConditionNumber. They are small on purpose:
// gonum's optimize package pulls in its CMA-ES dependencies (and a module
// this project does not otherwise need) for two textbook methods.

// bfgs minimises f from x0 with the BFGS quasi-Newton update (Nocedal &
// Wright, Numerical Optimization, Alg. 6.1) and a backtracking Armijo line
// search. fg returns f(x) and fills grad. It returns the best point found.
func bfgs(fg func(x, grad []float64) float64, x0 []float64, maxIter int) ([]float64, float64) {
	n := len(x0)
	x := slices.Clone(x0)
	g := make([]float64, n)
	f := fg(x, g)
	if isInfOrNaN(f) {
		return x, f
	}
	h := identity(n) // inverse Hessian approximation, row-major
	d := make([]float64, n)
	xn := make([]float64, n)
	gn := make([]float64, n)
	s := make([]float64, n)
	y := make([]float64, n)
	hy := make([]float64, n)
	for it := 0; it < maxIter; it++ {
		if norm(g) < 1e-13 {
			break
		}
		for i := 0; i < n; i++ {
			d[i] = 0
			for j := 0; j < n; j++ {
				d[i] -= h[i*n+j] * g[j]
			}
		}
		slope := dot(g, d)
		if slope >= 0 { // not a descent direction: restart from steepest descent
			h = identity(n)
			for i := range d {
				d[i] = -g[i]
			}
			slope = dot(g, d)
		}
		step, fn := 1.0, 0.0
		ok := false
		for ls := 0; ls < 60; ls++ {
			for i := range xn {
				xn[i] = x[i] + step*d[i]
			}
			fn = fg(xn, gn)
			if !isInfOrNaN(fn) && fn <= f+1e-4*step*slope {
				ok = true
				break
			}
			step /= 2
		}
		if !ok {
			break
		}
		for i := range s {
			s[i] = xn[i] - x[i]
			y[i] = gn[i] - g[i]
		}
		done := f-fn <= 1e-15*math.Max(1, math.Abs(f))
		copy(x, xn)
		copy(g, gn)
		f = fn
		if done {
			break
		}
		sy := dot(s, y)
		if sy <= 1e-16 {
			h = identity(n)
			continue
		}
		// H ← (I - ρ s yᵀ) H (I - ρ y sᵀ) + ρ s sᵀ
		rho := 1 / sy
		for i := 0; i < n; i++ {
			hy[i] = 0
			for j := 0; j < n; j++ {
				hy[i] += h[i*n+j] * y[j]
			}
		}
		yhy := dot(y, hy)
		for i := 0; i < n; i++ {
			for j := 0; j < n; j++ {
				h[i*n+j] += -rho*(s[i]*hy[j]+hy[i]*s[j]) + (rho*rho*yhy+rho)*s[i]*s[j]
			}
		}
	}
	return x, f
}

// nelderMead minimises f from x0 with the Nelder-Mead simplex method
// (standard coefficients 1, 2, 1/2, 1/2), restarting the simplex around the
// best point until a restart brings no improvement.
func nelderMead(f func(x []float64) float64, x0 []float64, scale float64, maxEval int) ([]float64, float64) {
	n := len(x0)
	best := slices.Clone(x0)
	bestF := f(best)
	evals := 1
	for restart := 0; restart < 10 && evals < maxEval; restart++ {
		pts := make([][]float64, n+1)
		fs := make([]float64, n+1)
		pts[0], fs[0] = slices.Clone(best), bestF
		for i := 1; i <= n; i++ {
			pts[i] = slices.Clone(best)
			pts[i][i-1] += scale
			fs[i] = f(pts[i])
			evals++
		}
		cen := make([]float64, n)
		trial := func(t float64) ([]float64, float64) {
			// point cen + t (cen - worst)
			p := make([]float64, n)
			for i := range p {
				p[i] = cen[i] + t*(cen[i]-pts[n][i])
			}
			evals++
			return p, f(p)
		}
		for evals < maxEval {
			idx := make([]int, n+1)
			for i := range idx {
				idx[i] = i
			}
			slices.SortStableFunc(idx, func(a, b int) int { return cmpF(fs[a], fs[b]) })
			np, nf := make([][]float64, n+1), make([]float64, n+1)
			for i, k := range idx {
				np[i], nf[i] = pts[k], fs[k]
			}
			pts, fs = np, nf
			if math.Abs(fs[n]-fs[0]) <= 1e-15*math.Max(1, math.Abs(fs[0])) && spread(pts) < 1e-12 {
				break
			}
			for i := range cen {
				cen[i] = 0
				for k := 0; k < n; k++ {
					cen[i] += pts[k][i] / float64(n)
				}
			}
			xr, fr := trial(1)
			switch {
			case fr < fs[0]:
				if xe, fe := trial(2); fe < fr {
					pts[n], fs[n] = xe, fe
				} else {
					pts[n], fs[n] = xr, fr
				}
			case fr < fs[n-1]:
				pts[n], fs[n] = xr, fr
			default:
				t := -0.5
				if fr < fs[n] {
					t = 0.5
				}
				if xc, fc := trial(t); fc < math.Min(fr, fs[n]) {
					pts[n], fs[n] = xc, fc
				} else {
					for k := 1; k <= n; k++ {
						for i := range pts[k] {
							pts[k][i] = pts[0][i] + 0.5*(pts[k][i]-pts[0][i])
						}
						fs[k] = f(pts[k])
						evals++
					}
				}
			}
		}
		i0 := 0
		for i := range fs {
			if fs[i] < fs[i0] {
				i0 = i
			}
		}
		if !(fs[i0] < bestF-1e-15*math.Max(1, math.Abs(bestF))) {
			if fs[i0] < bestF {
				best, bestF = pts[i0], fs[i0]
			}
			break
		}
		best, bestF = pts[i0], fs[i0]
		scale = math.Max(scale/10, 1e-6)
	}
	return best, bestF
}

func cmpF(a, b float64) int {
	switch {
	case a < b || (!math.IsNaN(a) && math.IsNaN(b)):
		return -1
	case a > b || (math.IsNaN(a) && !math.IsNaN(b)):
		return 1
	}
	return 0
}

func spread(pts [][]float64) float64 {
	m := 0.0
	for _, p := range pts[1:] {
		for i := range p {
			m = math.Max(m, math.Abs(p[i]-pts[0][i]))
		}
	}
	return m
}

func identity(n int) []float64 {
	h := make([]float64, n*n)
	for i := 0; i < n; i++ {
		h[i*n+i] = 1
	}
	return h
}

func dot(a, b []float64) float64 {
	s := 0.0
	for i := range a {
		s += a[i] * b[i]
	}
	return s
}

func norm(a []float64) float64 { return math.Sqrt(dot(a, a)) }
