package numeric

import "math"

// GridGolden minimises f over [lo, hi]: a grid of the given step from lo,
// then 40 golden-section steps (Kiefer 1953) in the bracket of one step on
// either side of the best grid point, keeping the grid point when the
// refined one is worse. The grid guards against the local minima a
// bracketing search alone would stop at.
func GridGolden(f func(float64) float64, lo, hi, step float64) float64 {
	best, bestV := lo, math.Inf(1)
	for x := lo; x <= hi+1e-12; x += step {
		if v := f(x); v < bestV {
			best, bestV = x, v
		}
	}
	a, b := math.Max(lo, best-step), math.Min(hi, best+step)
	g := (math.Sqrt(5) - 1) / 2
	c, d := b-g*(b-a), a+g*(b-a)
	fc, fd := f(c), f(d)
	for i := 0; i < 40; i++ {
		if fc < fd {
			b, d, fd = d, c, fc
			c = b - g*(b-a)
			fc = f(c)
		} else {
			a, c, fc = c, d, fd
			d = a + g*(b-a)
			fd = f(d)
		}
	}
	x := (a + b) / 2
	if f(x) > bestV {
		x = best
	}
	return x
}
