package fit

import (
	"context"
	"math"
	"slices"
	"sort"
)

// This file holds the two local minimisers behind Optimize. gonum's
// optimize package would serve, but it pulls in a module (golang.org/x/tools,
// through stat/distmv) that the project's go.sum does not list; these are
// the textbook algorithms, tested in optimize_test.go on the standard test
// functions of gonum/optimize/functions.

// minStatus says how a local minimisation ended.
type minStatus int

const (
	minConverged minStatus = iota
	minEvalLimit
	minStalled // no further progress possible (line search failed)
	minCancelled
)

// nelderMead minimises f from x0 with the Nelder–Mead simplex, coefficients
// reflection 1, expansion 2, contraction ½, shrink ½, initial simplex x0 and
// x0 + size e_i. It stops when the spread of the simplex values is below
// ftol (relative and absolute) and its extent below xtol, restarting once
// from the best vertex to guard against a collapsed simplex.
//
// References:
//   - Nelder, J. A. & Mead, R. 1965, Computer Journal 7, 308.
//   - Lagarias, J. C., Reeds, J. A., Wright, M. H. & Wright, P. E. 1998,
//     SIAM J. Optim. 9, 112, §2 (the algorithm and its coefficients).
func nelderMead(ctx context.Context, f func([]float64) float64, x0 []float64, size float64, maxEval int) ([]float64, float64, minStatus) {
	const ftol, xtol = 1e-13, 1e-10
	n := len(x0)
	evals := 0
	eval := func(x []float64) float64 { evals++; return f(x) }
	best, fbest := slices.Clone(x0), eval(x0)
	for restart := 0; restart < 2; restart++ {
		v := make([][]float64, n+1)
		fv := make([]float64, n+1)
		v[0], fv[0] = slices.Clone(best), fbest
		for i := range n {
			v[i+1] = slices.Clone(best)
			v[i+1][i] += size
			fv[i+1] = eval(v[i+1])
		}
		centroid := make([]float64, n)
		xr := make([]float64, n)
		xe := make([]float64, n)
		xc := make([]float64, n)
		point := func(dst []float64, t float64, worst []float64) {
			for d := range dst {
				dst[d] = centroid[d] + t*(worst[d]-centroid[d])
			}
		}
		for {
			idx := make([]int, n+1)
			for i := range idx {
				idx[i] = i
			}
			sort.SliceStable(idx, func(a, b int) bool { return fv[idx[a]] < fv[idx[b]] })
			sv := make([][]float64, n+1)
			sf := make([]float64, n+1)
			for i, j := range idx {
				sv[i], sf[i] = v[j], fv[j]
			}
			v, fv = sv, sf
			if ctx.Err() != nil {
				return v[0], fv[0], minCancelled
			}
			var ext float64
			for i := 1; i <= n; i++ {
				for d := range n {
					ext = math.Max(ext, math.Abs(v[i][d]-v[0][d]))
				}
			}
			spread := fv[n] - fv[0]
			if spread <= ftol*(math.Abs(fv[0])+1) && ext <= xtol {
				break
			}
			if evals >= maxEval {
				return v[0], fv[0], minEvalLimit
			}
			clear(centroid)
			for i := range n {
				for d := range n {
					centroid[d] += v[i][d] / float64(n)
				}
			}
			worst := v[n]
			point(xr, -1, worst)
			fr := eval(xr)
			switch {
			case fr < fv[0]:
				point(xe, -2, worst)
				if fe := eval(xe); fe < fr {
					copy(v[n], xe)
					fv[n] = fe
				} else {
					copy(v[n], xr)
					fv[n] = fr
				}
			case fr < fv[n-1]:
				copy(v[n], xr)
				fv[n] = fr
			default:
				var fc float64
				if fr < fv[n] {
					point(xc, -0.5, worst) // outside contraction
					fc = eval(xc)
					if fc <= fr {
						copy(v[n], xc)
						fv[n] = fc
						continue
					}
				} else {
					point(xc, 0.5, worst) // inside contraction
					fc = eval(xc)
					if fc < fv[n] {
						copy(v[n], xc)
						fv[n] = fc
						continue
					}
				}
				for i := 1; i <= n; i++ {
					for d := range n {
						v[i][d] = v[0][d] + 0.5*(v[i][d]-v[0][d])
					}
					fv[i] = eval(v[i])
				}
			}
		}
		improved := fv[0] < fbest-ftol*(math.Abs(fbest)+1)
		best, fbest = v[0], fv[0]
		if !improved && restart > 0 {
			break
		}
		size = math.Max(size*0.1, 1e-6)
	}
	return best, fbest, minConverged
}

// bfgs minimises f with gradient grad by the BFGS quasi-Newton method with
// a backtracking (Armijo) line search; the update is skipped when the
// curvature condition yᵀs > 0 fails, and the initial inverse Hessian is
// scaled by yᵀs / yᵀy after the first step (Nocedal & Wright eq. 6.20).
//
// References:
//   - Nocedal, J. & Wright, S. J. 2006, Numerical Optimization, 2nd ed.,
//     Springer, Algorithm 6.1, eqs. 6.17 and 6.20; Algorithm 3.1.
func bfgs(ctx context.Context, f func([]float64) float64, grad func(g, x []float64), x0 []float64, maxEval int, evals func() int) ([]float64, float64, minStatus) {
	n := len(x0)
	x := slices.Clone(x0)
	fx := f(x)
	g := make([]float64, n)
	grad(g, x)
	hinv := make([]float64, n*n)
	for i := range n {
		hinv[i*n+i] = 1
	}
	p := make([]float64, n)
	xn := make([]float64, n)
	gn := make([]float64, n)
	s := make([]float64, n)
	y := make([]float64, n)
	hy := make([]float64, n)
	start := evals()
	small := 0
	for iter := 0; ; iter++ {
		if ctx.Err() != nil {
			return x, fx, minCancelled
		}
		if evals()-start >= maxEval {
			return x, fx, minEvalLimit
		}
		gmax := 0.0
		for _, v := range g {
			if math.IsNaN(v) || math.IsInf(v, 0) {
				return x, fx, minStalled
			}
			gmax = math.Max(gmax, math.Abs(v))
		}
		if gmax <= 1e-10*math.Max(1, math.Abs(fx)) {
			return x, fx, minConverged
		}
		var slope float64
		for i := range n {
			var v float64
			for j := range n {
				v -= hinv[i*n+j] * g[j]
			}
			p[i] = v
			slope += v * g[i]
		}
		if slope >= 0 {
			// Not a descent direction: reset to steepest descent.
			for i := range n {
				for j := range n {
					hinv[i*n+j] = 0
				}
				hinv[i*n+i] = 1
				p[i] = -g[i]
			}
			slope = -dot(g, g)
		}
		alpha := 1.0
		var fn float64
		ok := false
		for range 60 {
			for i := range n {
				xn[i] = x[i] + alpha*p[i]
			}
			fn = f(xn)
			if fn <= fx+1e-4*alpha*slope {
				ok = true
				break
			}
			alpha *= 0.5
		}
		if !ok {
			return x, fx, minStalled
		}
		grad(gn, xn)
		for i := range n {
			s[i] = xn[i] - x[i]
			y[i] = gn[i] - g[i]
		}
		if fx-fn <= 1e-15*math.Abs(fx) {
			small++
			if small >= 3 {
				copy(x, xn)
				fx = fn
				copy(g, gn)
				return x, fx, minConverged
			}
		} else {
			small = 0
		}
		copy(x, xn)
		fx = fn
		copy(g, gn)
		ys := dot(y, s)
		if !(ys > 1e-12*math.Sqrt(dot(y, y)*dot(s, s))) {
			continue
		}
		if iter == 0 {
			scale := ys / dot(y, y)
			for i := range hinv {
				hinv[i] *= scale
			}
		}
		// H ← (I − ρ s yᵀ) H (I − ρ y sᵀ) + ρ s sᵀ, ρ = 1/yᵀs.
		rho := 1 / ys
		for i := range n {
			var v float64
			for j := range n {
				v += hinv[i*n+j] * y[j]
			}
			hy[i] = v
		}
		yhy := dot(y, hy)
		for i := range n {
			for j := range n {
				hinv[i*n+j] += -rho*(hy[i]*s[j]+s[i]*hy[j]) + (rho*rho*yhy+rho)*s[i]*s[j]
			}
		}
	}
}

func dot(a, b []float64) float64 {
	var s float64
	for i := range a {
		s += a[i] * b[i]
	}
	return s
}
