// Package intermittent forecasts series with many zero periods (slow
// sellers) by Croston's method with the bias correction of Syntetos &
// Boylan: Croston (1972, "Forecasting and stock control for intermittent
// demands", Operational Research Quarterly 23:289–303) smooths the non-zero
// demand sizes z and the intervals p between them separately; Syntetos &
// Boylan (2005, "The accuracy of intermittent demand estimates", IJF
// 21:303–314) showed z/p to be biased upwards and multiply it by 1 − α/2
// (the SBA method).
package intermittent

import (
	"math"

	"trueup/inputerr"
	"trueup/models"
)

// Name is the registry name of the family.
const Name = "intermittent"

// Alpha is the smoothing parameter of sizes and intervals. Values between
// 0.05 and 0.2 are used in the studies above; 0.1 is common practice.
const Alpha = 0.1

// ADICutoff is the average inter-demand interval above which a series is
// treated as intermittent (Syntetos, Boylan & Croston 2005, "On the
// categorization of demand patterns", JORS 56:495–503: 1.32).
const ADICutoff = 1.32

// Intermittent reports whether y is a non-negative series whose average
// interval between non-zero values exceeds ADICutoff, with at least two
// non-zero values.
func Intermittent(y []float64) bool {
	nz := 0
	for _, v := range y {
		if v < 0 {
			return false
		}
		if v != 0 {
			nz++
		}
	}
	return nz >= 2 && float64(len(y))/float64(nz) > ADICutoff
}

// SBA is the Syntetos–Boylan approximation to Croston's method. The zero
// value is ready to use.
type SBA struct{}

var (
	_ models.Family = SBA{}
	_ models.Model  = (*Fitted)(nil)
)

// Name implements models.Family.
func (SBA) Name() string { return Name }

// Fit implements models.Family. It needs a non-negative series with at
// least two non-zero values. Sizes and intervals start at the first
// non-zero value and its position (common practice).
func (SBA) Fit(y []float64, _ models.FitOptions) (models.Model, error) {
	nz := 0
	for i, v := range y {
		if math.IsNaN(v) || math.IsInf(v, 0) || v < 0 {
			return nil, inputerr.New("observation %d: the intermittent-demand method needs finite non-negative values", i+1)
		}
		if v != 0 {
			nz++
		}
	}
	if nz < 2 {
		return nil, inputerr.New("the intermittent-demand method needs at least two non-zero values, the series has %d", nz)
	}
	f := &Fitted{n: len(y), resid: make([]float64, len(y))}
	var z, p float64
	started, gap := false, 0
	sse, k := 0.0, 0
	for t, v := range y {
		gap++
		if started {
			e := v - (1-Alpha/2)*z/p
			f.resid[t] = e
			sse += e * e
			k++
		} else {
			f.resid[t] = math.NaN()
		}
		if v == 0 {
			continue
		}
		if !started {
			z, p, started = v, float64(gap), true
		} else {
			z += Alpha * (v - z)
			p += Alpha * (float64(gap) - p)
		}
		gap = 0
	}
	f.size, f.interval = z, p
	f.sigma2 = sse / float64(k)
	f.crit = models.NewCriteria(models.GaussianLogLik(math.Max(sse, 1e-300), k), 3, k)
	return f, nil
}

// Fitted is a fitted SBA model.
type Fitted struct {
	n              int
	size, interval float64
	resid          []float64
	sigma2         float64
	crit           models.Criteria
}

// Family implements models.Model.
func (*Fitted) Family() string { return Name }

// Spec implements models.Model.
func (*Fitted) Spec() string { return "Croston–SBA (α=0.1)" }

// Params implements models.Model: "estimates" are the smoothed demand
// size and interval, with the fixed "alpha".
func (f *Fitted) Params() map[string]any {
	return map[string]any{
		"estimates": []models.Estimate{{Name: "size", Value: f.size}, {Name: "interval", Value: f.interval}},
		"alpha":     Alpha,
	}
}

// Forecast implements models.Model: the flat rate (1 − α/2)·z/p per period.
// The variance is the mean squared one-step error of that rate in the
// history, widened with the horizon as for simple exponential smoothing,
// σ²(1 + (h−1)α²) (Hyndman et al. 2008, Table 6.1): an approximation,
// since the method has no stochastic model of its own.
func (f *Fitted) Forecast(h int) (mean, variance []float64) {
	mean, variance = make([]float64, h), make([]float64, h)
	rate := (1 - Alpha/2) * f.size / f.interval
	for i := range mean {
		mean[i] = rate
		variance[i] = f.sigma2 * (1 + float64(i)*Alpha*Alpha)
	}
	return mean, variance
}

// Residuals implements models.Model.
func (f *Fitted) Residuals() []float64 { return append([]float64(nil), f.resid...) }

// Sigma2 implements models.Model.
func (f *Fitted) Sigma2() float64 { return f.sigma2 }

// Criteria implements models.Model.
func (f *Fitted) Criteria() models.Criteria { return f.crit }

// NObs implements models.Model.
func (f *Fitted) NObs() int { return f.n }

// Warning implements models.Model.
func (*Fitted) Warning() string { return "" }
