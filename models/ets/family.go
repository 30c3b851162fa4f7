package ets

import (
	"fmt"
	"math"
	"strings"

	"trueup/inputerr"
	"trueup/models"
)

// MaxSeasonalPeriod is the longest period for which seasonal forms are
// tried: each seasonal state is a free parameter, so weekly data (m = 52)
// would carry 51 of them; the ARIMA family's Fourier terms serve it.
const MaxSeasonalPeriod = 24

// Family is the automatic ETS family: it fits every admissible form allowed
// by the data and keeps the one with the smallest AICc (Hyndman, Koehler,
// Snyder & Grose 2002, §4; HKOS §7.2). The zero value is ready to use.
type Family struct{}

var _ models.Family = Family{}

// Name is the registry name of the ETS family.
const Name = "ets"

// Name implements models.Family.
func (Family) Name() string { return Name }

// Fit implements models.Family by Auto.
func (Family) Fit(y []float64, opt models.FitOptions) (models.Model, error) {
	f, _, err := Auto(y, opt.Period)
	if err != nil {
		return nil, err
	}
	return f, nil
}

// Fixed is the ETS family with one fixed form, estimated by FitSpec with
// FitOptions.Period as the seasonal period.
type Fixed struct {
	Spec Spec
	// Start, when not nil, starts the estimation from a previous fit of
	// the same form (see FitFrom).
	Start *Fitted
}

var _ models.Family = Fixed{}

// Name implements models.Family.
func (Fixed) Name() string { return Name }

// Fit implements models.Family by FitFrom.
func (fam Fixed) Fit(y []float64, opt models.FitOptions) (models.Model, error) {
	f, err := FitFrom(y, fam.Spec, opt.Period, fam.Start)
	if err != nil {
		return nil, err
	}
	return f, nil
}

// Candidate is one form tried by Auto and its AICc (+Inf when the fit
// failed or was inadmissible).
type Candidate struct {
	Spec Spec
	AICc float64
}

// Candidates lists the forms Auto tries for y with period m, and a note on
// what it left out and why (empty when nothing was left out):
// multiplicative error or seasonality only for strictly positive data;
// seasonal forms only for 2 ≤ m ≤ MaxSeasonalPeriod with at least two full
// seasons; every form only with more observations than parameters + 1, so
// that AICc is finite.
func Candidates(y []float64, m int) ([]Spec, string) {
	positive := true
	for _, v := range y {
		if !(v > 0) {
			positive = false
			break
		}
	}
	var notes []string
	seasonalOK := m >= 2 && m <= MaxSeasonalPeriod && len(y) >= 2*m
	switch {
	case m > MaxSeasonalPeriod:
		notes = append(notes, fmt.Sprintf("no seasonal forms for period %d > %d", m, MaxSeasonalPeriod))
	case m >= 2 && len(y) < 2*m:
		notes = append(notes, fmt.Sprintf("no seasonal forms: %d observations is less than two seasons of %d", len(y), m))
	}
	if !positive {
		notes = append(notes, "no multiplicative forms: data not strictly positive")
	}
	var out []Spec
	shortSkipped := 0
	for _, s := range AllSpecs() {
		if s.Multiplicative() && !positive {
			continue
		}
		if s.Seasonal() && !seasonalOK {
			continue
		}
		mm := 1
		if s.Seasonal() {
			mm = m
		}
		if len(y) < (packer{sp: s, m: mm}).size()+3 {
			shortSkipped++
			continue
		}
		out = append(out, s)
	}
	if shortSkipped > 0 {
		notes = append(notes, fmt.Sprintf("%d forms skipped: too few observations for their parameters", shortSkipped))
	}
	return out, strings.Join(notes, "; ")
}

// Auto fits every candidate form (see Candidates) from the first starting
// point, picks the admissible fit with the smallest AICc, refits it from
// every starting point, and returns it with every candidate's AICc.
// Forms whose fit fails or lands outside the admissible region are left
// out of the choice.
func Auto(y []float64, m int) (*Fitted, []Candidate, error) {
	for i, v := range y {
		if math.IsNaN(v) || math.IsInf(v, 0) {
			return nil, nil, inputerr.New("ets: observation %d is not finite", i+1)
		}
	}
	specs, note := Candidates(y, m)
	if len(specs) == 0 {
		return nil, nil, inputerr.New("ets: %d observations are too few for any exponential smoothing form", len(y))
	}
	var best *Fitted
	cands := make([]Candidate, len(specs))
	for i, s := range specs {
		cands[i] = Candidate{Spec: s, AICc: math.Inf(1)}
		mm := 1
		if s.Seasonal() {
			mm = m
		}
		f, err := fit(y, s, mm, starts[:1], nil)
		if err != nil || !f.admissible || math.IsInf(f.crit.AICc, 0) {
			continue
		}
		cands[i].AICc = f.crit.AICc
		if best == nil || f.crit.AICc < best.crit.AICc {
			best = f
		}
	}
	if best == nil {
		return nil, cands, fmt.Errorf("ets: no candidate form gave an admissible fit")
	}
	// The search used one start per form; refit the choice from all starts.
	if g, err := fit(y, best.spec, best.m, starts, nil); err == nil && g.admissible && g.crit.AICc < best.crit.AICc {
		best = g
	}
	if note != "" {
		best.warn = joinWarn(best.warn, note)
	}
	return best, cands, nil
}
