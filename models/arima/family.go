package arima

import (
	"math"

	"trueup/models"
)

// Name is the registry name of the ARIMA family.
const Name = "arima"

// Family is the seasonal ARIMA family with automatic order selection
// (see Auto). Its Options' Period is replaced by FitOptions.Period.
type Family struct {
	Options AutoOptions
}

var _ models.Family = Family{}

// Name returns "arima".
func (Family) Name() string { return Name }

// Fit chooses and estimates a model for y (see Auto).
func (fam Family) Fit(y []float64, opt models.FitOptions) (models.Model, error) {
	o := fam.Options
	o.Period = opt.Period
	f, err := Auto(y, o)
	if err != nil {
		return nil, err
	}
	return f, nil
}

// Fixed is the ARIMA family with one fixed form, estimated by FitOrder.
// When Spec.Period is 0 the period comes from FitOptions.Period.
type Fixed struct {
	Spec Spec
	// Start, when not nil, starts the estimation from a previous fit of
	// the same form (see Options.Start).
	Start *Fitted
}

var _ models.Family = Fixed{}

// Name returns "arima".
func (Fixed) Name() string { return Name }

// Fit estimates the fixed form on y.
func (fam Fixed) Fit(y []float64, opt models.FitOptions) (models.Model, error) {
	s := fam.Spec
	if s.Period == 0 {
		s.Period = opt.Period
	}
	f, err := FitOrder(y, s, Options{Start: fam.Start})
	if err != nil {
		return nil, err
	}
	return f, nil
}

// constantModel represents a series whose values are all equal: the mean
// model with zero innovation variance. Its likelihood is degenerate
// (unbounded); it is reported as 0 with K = 2, and the Warning says so.
func constantModel(y []float64, log bool) *Fitted {
	c := y[0]
	if log {
		c = math.Log(c)
	}
	n := len(y)
	f := &Fitted{
		spec:   Spec{Constant: true, Log: log},
		beta:   []float64{c},
		nObs:   n,
		m:      1,
		resid:  make([]float64, n),
		r:      1,
		a:      []float64{0},
		p:      []float64{0},
		phi:    []float64{0},
		rv:     []float64{1},
		sigma2: 0,
		warn:   []string{"constant series: forecast is its value with zero variance; the likelihood is degenerate and reported as 0"},
	}
	f.crit.K, f.crit.N = 2, n
	return f
}
