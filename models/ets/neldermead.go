package ets

import "math"

// nelderMead minimises f from x0 with the simplex method of Nelder & Mead
// (1965, "A simplex method for function minimization", Computer Journal
// 7:308–313), with the standard coefficients (reflection 1, expansion 2,
// contraction ½, shrink ½). f returns +Inf outside the feasible region, which
// the simplex treats as a very bad point. step gives the initial edge length
// per coordinate; a vertex that starts infeasible is tried on the other side.
// It stops after maxEval evaluations or when the spread of function values
// over the simplex falls below tol·(|f_best| + tol). x0 is overwritten with
// the best point; the best value is returned.
type nelderMead struct {
	n       int
	pts     [][]float64
	vals    []float64
	order   []int
	cen, xr []float64
	xe, xc  []float64
}

func newNelderMead(n int) *nelderMead {
	w := &nelderMead{n: n, pts: make([][]float64, n+1), vals: make([]float64, n+1), order: make([]int, n+1)}
	for i := range w.pts {
		w.pts[i] = make([]float64, n)
	}
	w.cen, w.xr, w.xe, w.xc = make([]float64, n), make([]float64, n), make([]float64, n), make([]float64, n)
	return w
}

func (w *nelderMead) minimize(f func([]float64) float64, x0, step []float64, maxEval int, tol float64) (float64, int) {
	n := w.n
	copy(w.pts[0], x0)
	w.vals[0] = f(w.pts[0])
	evals := 1
	for i := 1; i <= n; i++ {
		p := w.pts[i]
		copy(p, x0)
		p[i-1] += step[i-1]
		w.vals[i] = f(p)
		evals++
		if math.IsInf(w.vals[i], 1) {
			p[i-1] = x0[i-1] - step[i-1]
			w.vals[i] = f(p)
			evals++
		}
	}
	for i := range w.order {
		w.order[i] = i
	}
	for evals < maxEval {
		w.sortOrder()
		best, worst, second := w.order[0], w.order[n], w.order[n-1]
		fb, fw := w.vals[best], w.vals[worst]
		if !math.IsInf(fw, 1) && math.Abs(fw-fb) <= tol*(math.Abs(fb)+tol) {
			break
		}
		for j := 0; j < n; j++ {
			s := 0.0
			for _, i := range w.order[:n] {
				s += w.pts[i][j]
			}
			w.cen[j] = s / float64(n)
		}
		xw := w.pts[worst]
		for j := range w.xr {
			w.xr[j] = w.cen[j] + (w.cen[j] - xw[j])
		}
		fr := f(w.xr)
		evals++
		switch {
		case fr < fb:
			for j := range w.xe {
				w.xe[j] = w.cen[j] + 2*(w.cen[j]-xw[j])
			}
			fe := f(w.xe)
			evals++
			if fe < fr {
				copy(xw, w.xe)
				w.vals[worst] = fe
			} else {
				copy(xw, w.xr)
				w.vals[worst] = fr
			}
		case fr < w.vals[second]:
			copy(xw, w.xr)
			w.vals[worst] = fr
		default:
			// Contract towards the better of the worst point and its reflection.
			outside := fr < fw
			for j := range w.xc {
				if outside {
					w.xc[j] = w.cen[j] + 0.5*(w.xr[j]-w.cen[j])
				} else {
					w.xc[j] = w.cen[j] + 0.5*(xw[j]-w.cen[j])
				}
			}
			fc := f(w.xc)
			evals++
			if (outside && fc <= fr) || (!outside && fc < fw) {
				copy(xw, w.xc)
				w.vals[worst] = fc
				continue
			}
			// Shrink every vertex towards the best one.
			xb := w.pts[best]
			for _, i := range w.order[1:] {
				p := w.pts[i]
				for j := range p {
					p[j] = xb[j] + 0.5*(p[j]-xb[j])
				}
				w.vals[i] = f(p)
				evals++
			}
		}
	}
	bi := 0
	for i := range w.vals {
		if w.vals[i] < w.vals[bi] {
			bi = i
		}
	}
	copy(x0, w.pts[bi])
	return w.vals[bi], evals
}

// sortOrder orders vertex indices by value (insertion sort: the simplex is
// nearly sorted between iterations, and this allocates nothing).
func (w *nelderMead) sortOrder() {
	o := w.order
	for i := 1; i < len(o); i++ {
		k := o[i]
		j := i - 1
		for j >= 0 && w.vals[o[j]] > w.vals[k] {
			o[j+1] = o[j]
			j--
		}
		o[j+1] = k
	}
}
