// Package choose picks a model per series by out-of-sample accuracy.
//
// Candidates — by default seasonal naive, drift, Theta, automatic ETS,
// automatic ARIMA and the median of ETS, ARIMA and Theta — are compared at
// several rolling forecast origins (Tashman 2000, "Out-of-sample tests of
// forecasting accuracy", IJF 16:437–450), scored at the run's horizon by
// the mean absolute scaled error (Hyndman & Koehler 2006, "Another look at
// measures of forecast accuracy", IJF 22:679–688).
//
// The model used is the model validated. Each candidate's own automatic
// search (ARIMA order, ETS form, Box–Cox λ, Theta's seasonal adjustment)
// runs once, on the training data of the earliest origin; that form is then
// re-estimated, not re-searched, at every later origin and finally on the
// whole series. So every scored forecast is out of sample for the whole
// procedure, and the refitted winner has the form and transform that were
// scored.
//
// The rule (see Options.Margin): the combination is the default, and a
// single candidate replaces it only when its validation MASE is lower by
// the margin. For a strongly seasonal series (STL seasonal strength above
// 0.64 on the first training window, numeric.StronglySeasonal) a candidate
// whose method or fitted form has no seasonal component — drift, a
// non-seasonal ETS form or ARIMA order, Theta without seasonal adjustment —
// is not offered, alone or in the combination. One lucky stretch therefore
// cannot hand a strongly seasonal series to a random walk. Nor is a
// candidate whose forecast distribution at the horizon reaches the pole
// of its Box–Cox back-transform (λ < 0), at a validation origin or on
// the whole series (clearOfPole): its forecasts and variances on the data
// scale grow without bound there, and one such node inflates every
// aggregate's reconciled variance above it. Combining is the safer default because a median of
// reasonable methods is rarely far from the best of them (Petropoulos &
// Svetunkov 2020, "A simple combination of univariate models", IJF
// 36:110–115); README's "Accuracy of the automatic choice" gives the
// measurements behind the margin.
package choose

import (
	"errors"
	"fmt"
	"math"
	"slices"
	"sort"
	"strings"

	"trueup/inputerr"
	"trueup/internal/numeric"
	"trueup/models"
	"trueup/models/naive"
)

// Name is the registry name of the automatic choice.
const Name = "auto"

// Options tune the validation. The zero value of each field is the
// documented default.
type Options struct {
	// Origins is the largest number of forecast origins (default 6); fewer
	// are used when the series is short.
	Origins int
	// Step is the distance between successive origins; 0 spreads the
	// origins over one season, ⌈m/Origins⌉ periods apart, so that no
	// single stretch of the season decides.
	Step int
	// Margin is the relative MASE advantage a single candidate needs over
	// the combination to be chosen instead of it (default 0.1: at least
	// 10% lower). A negative value means 0, the plain lowest score.
	Margin float64
}

// Family chooses among candidate families by rolling-origin MASE. It
// implements models.Family under the name "auto".
type Family struct {
	cands   []models.Family
	seasons []bool // whether candidate i models seasonality
	members []int  // indices of the combined candidates
	opt     Options
}

var _ models.Family = (*Family)(nil)

// Candidate is one family offered to the choice.
type Candidate struct {
	Family models.Family
	// NonSeasonal marks a family with no seasonal component (drift); it
	// is not offered for series the seasonality test finds seasonal.
	NonSeasonal bool
	// Combine puts the family's forecasts into the median combination.
	Combine bool
}

// New returns the automatic choice among cands, listed simplest first
// (ties go to the earlier one), plus the median combination of those with
// Combine set when there are at least two.
func New(opt Options, cands ...Candidate) *Family {
	f := &Family{opt: opt}
	for _, c := range cands {
		if c.Combine {
			f.members = append(f.members, len(f.cands))
		}
		f.cands = append(f.cands, c.Family)
		f.seasons = append(f.seasons, !c.NonSeasonal)
	}
	if len(f.members) < 2 {
		f.members = nil
	}
	if f.opt.Origins <= 0 {
		f.opt.Origins = 6
	}
	if f.opt.Margin == 0 {
		f.opt.Margin = 0.1
	} else if f.opt.Margin < 0 {
		f.opt.Margin = 0
	}
	return f
}

// Name implements models.Family.
func (*Family) Name() string { return Name }

// Score is one candidate's validation result. MASE is the mean over the
// origins of the MASE at the validation horizon; it is +Inf when the
// candidate failed at some origin or was not offered (Err says why). Spec
// is the form validated.
type Score struct {
	Family string
	Spec   string
	MASE   float64
	Err    string
}

// combined is the index of the combination in the scores (after the
// single candidates), or −1.
func (f *Family) combined() int {
	if f.members == nil {
		return -1
	}
	return len(f.cands)
}

// Fit implements models.Family: validate every candidate, refit the
// winner's validated form on all of y, and return it wrapped with the
// scores (see Fitted).
func (f *Family) Fit(y []float64, opt models.FitOptions) (models.Model, error) {
	for i, v := range y {
		if math.IsNaN(v) || math.IsInf(v, 0) {
			return nil, inputerr.New("observation %d is not a finite number", i+1)
		}
	}
	if len(y) == 0 {
		return nil, inputerr.New("the series is empty")
	}
	m := max(opt.Period, 1)
	h := horizon(opt)
	if mod, ok := oddSeries(y, m); ok {
		return mod, nil
	}
	v, ok := f.plan(len(y), m, h)
	if !ok {
		return f.fallback(y, opt, fmt.Sprintf("series of %d observations too short for validation", len(y)))
	}
	scores, frozen := f.validate(y, m, v, opt)
	win := f.pick(scores)
	if win < 0 {
		return f.fallback(y, opt, join(v.note, "every candidate failed in validation"))
	}
	note := v.note
	model, err := f.refit(win, frozen, scores, y, opt, h)
	if first := err; err != nil {
		// The winner failed on the full data: take the next best.
		for _, i := range rank(scores)[1:] {
			if math.IsInf(scores[i].MASE, 1) {
				break
			}
			if model, err = f.refit(i, frozen, scores, y, opt, h); err == nil {
				note = join(note, fmt.Sprintf("%s won validation but failed on the full series (%v); next best used", scores[win].Family, first))
				win = i
				break
			}
		}
		if err != nil {
			return nil, fmt.Errorf("auto: refit of every validated candidate failed: %w", err)
		}
	}
	return &Fitted{Model: model, scores: scores, winner: win, combined: f.combined(), margin: f.opt.Margin,
		origins: v.origins, horizon: v.horizon, note: note}, nil
}

// pick applies the rule of the package comment: the combination unless a
// single candidate beats it by the margin, in which case the best single
// candidate. It returns −1 when every candidate failed.
func (f *Family) pick(scores []Score) int {
	best := -1
	for i := range f.cands {
		if !math.IsInf(scores[i].MASE, 1) && (best < 0 || scores[i].MASE < scores[best].MASE) {
			best = i
		}
	}
	c := f.combined()
	if c < 0 || math.IsInf(scores[c].MASE, 1) {
		return best
	}
	if best >= 0 && scores[best].MASE < (1-f.opt.Margin)*scores[c].MASE {
		return best
	}
	return c
}

// refit fits candidate i's validated form on y (the combination refits
// the form of each member that went through validation).
func (f *Family) refit(i int, frozen []models.Family, scores []Score, y []float64, opt models.FitOptions, h int) (models.Model, error) {
	var mod models.Model
	if i < len(f.cands) {
		var err error
		if mod, err = frozen[i].Fit(y, opt); err != nil {
			return nil, err
		}
	} else {
		var parts []models.Model
		for _, k := range f.members {
			if scores[k].Err != "" {
				continue // failed or not offered in validation
			}
			part, err := frozen[k].Fit(y, opt)
			if err != nil {
				return nil, err
			}
			parts = append(parts, part)
		}
		mod = Median(parts...)
	}
	if !clearOfPole(mod, h) {
		return nil, errors.New(poleNote)
	}
	return mod, nil
}

// poleNote explains why a candidate whose forecast distribution reaches
// the pole of its Box–Cox back-transform is not used: its forecasts and
// variances on the data scale grow without bound (clearOfPole).
const poleNote = "not offered: its forecast distribution on the Box-Cox scale (lambda < 0) reaches the pole of the back-transform, where forecasts and variances grow without bound"

// horizon is the run's horizon, or one season when none is given.
func horizon(opt models.FitOptions) int {
	if opt.Horizon > 0 {
		return opt.Horizon
	}
	return max(opt.Period, 1)
}

// minTrain is the shortest training window used for validation: three full
// seasons, and at least ten observations. Seasonal ETS needs two full
// seasons plus room for its m+4 parameters and seasonal ARIMA loses m
// observations to differencing, so shorter windows would validate weaker,
// non-seasonal stand-ins (our choice).
func minTrain(m int) int {
	if m > 1 {
		return max(3*m, 10)
	}
	return 10
}

// design is the validation layout: origins, their spacing, the horizon
// scored, and a note when it was shortened.
type design struct {
	origins, step, horizon int
	note                   string
}

// plan lays out the validation for a series of T observations. The number
// of origins is reduced, and then the horizon shortened, when the series is
// too short for the full design; ok is false with no room at all.
func (f *Family) plan(T, m, h int) (design, bool) {
	k, step := f.opt.Origins, f.opt.Step
	if step <= 0 {
		step = max(1, (m+k-1)/k)
	}
	fits := func(k, hv int) bool { return T-hv-(k-1)*step >= minTrain(m) }
	hv := h
	for k > 1 && !fits(k, hv) {
		k--
	}
	for hv > 1 && !fits(k, hv) {
		hv--
	}
	if !fits(k, hv) {
		return design{}, false
	}
	d := design{origins: k, step: step, horizon: hv}
	if hv < h || k < f.opt.Origins {
		d.note = fmt.Sprintf("validation shortened to %d origin(s) at horizon %d (series of %d observations)", k, hv, T)
	}
	return d, true
}

// validate scores every candidate at the design's origins. The first
// origin runs each family's own search; later origins and the final refit
// use the frozen form it found (freeze), which validate returns.
func (f *Family) validate(y []float64, m int, v design, opt models.FitOptions) ([]Score, []models.Family) {
	T := len(y)
	first := T - v.horizon - (v.origins-1)*v.step
	seasonal := numeric.StronglySeasonal(y[:first], m)
	c := f.combined()
	scores := make([]Score, len(f.cands), len(f.cands)+1)
	for i, cand := range f.cands {
		scores[i].Family = cand.Name()
		if seasonal && !f.seasons[i] {
			scores[i].Err = "not offered: the series is strongly seasonal and this method is not"
		}
	}
	if c >= 0 {
		names := make([]string, len(f.members))
		for j, k := range f.members {
			names[j] = f.cands[k].Name()
		}
		scores = append(scores, Score{Family: strings.Join(names, "+")})
	}
	sums := make([]float64, len(scores))
	frozen := make([]models.Family, len(f.cands))
	vopt := opt
	vopt.Horizon = v.horizon
	fits := make([]models.Model, len(f.cands))
	for o := 0; o < v.origins; o++ {
		end := first + o*v.step
		train, test := y[:end], y[end:end+v.horizon]
		scale := maseScale(train, m)
		for i, cand := range f.cands {
			fits[i] = nil
			if scores[i].Err != "" {
				continue
			}
			fam := frozen[i]
			if o == 0 {
				fam = cand
			}
			mod, err := fam.Fit(train, vopt)
			if err != nil {
				scores[i].Err = err.Error()
				continue
			}
			if !clearOfPole(mod, v.horizon) {
				scores[i].Err = poleNote
				continue
			}
			if o == 0 {
				scores[i].Spec = mod.Spec()
				if seasonal && !hasSeason(mod) {
					scores[i].Err = "not offered: the series is strongly seasonal and the fitted form is not"
					continue
				}
				frozen[i] = freeze(mod, cand)
			}
			fits[i] = mod
			sums[i] += mase(pointForecast(mod, v.horizon), test, scale)
		}
		if c >= 0 && scores[c].Err == "" {
			parts := make([]models.Model, 0, len(f.members))
			for _, k := range f.members {
				if fits[k] != nil {
					parts = append(parts, fits[k])
				}
			}
			if len(parts) == 0 {
				scores[c].Err = "every member failed or was not offered"
				continue
			}
			comb := Median(parts...)
			if o == 0 {
				scores[c].Spec = comb.Spec()
			}
			sums[c] += mase(comb.PointForecast(v.horizon), test, scale)
		}
	}
	for i := range scores {
		if scores[i].Err != "" {
			scores[i].MASE = math.Inf(1)
		} else {
			scores[i].MASE = sums[i] / float64(v.origins)
		}
	}
	return scores, frozen
}

// maseScale is the in-sample mean absolute error of the seasonal naive
// method (lag m) on the training data, the MASE denominator of Hyndman &
// Koehler (2006, §3) for seasonal data; the lag-1 naive error when the
// seasonal one is zero or undefined, and 1 for a constant series.
func maseScale(train []float64, m int) float64 {
	for _, lag := range []int{m, 1} {
		if lag < 1 || len(train) <= lag {
			continue
		}
		s := 0.0
		for t := lag; t < len(train); t++ {
			s += math.Abs(train[t] - train[t-lag])
		}
		if s > 0 {
			return s / float64(len(train)-lag)
		}
	}
	return 1
}

// mase is the mean absolute scaled error of the forecasts fc for test.
func mase(fc, test []float64, scale float64) float64 {
	s := 0.0
	for i, v := range test {
		e := math.Abs(v - fc[i])
		if math.IsNaN(e) {
			return math.Inf(1)
		}
		s += e
	}
	return s / float64(len(test)) / scale
}

// rank orders candidate indices by score, stable on ties.
func rank(scores []Score) []int {
	idx := make([]int, len(scores))
	for i := range idx {
		idx[i] = i
	}
	sort.SliceStable(idx, func(a, b int) bool { return scores[idx[a]].MASE < scores[idx[b]].MASE })
	return idx
}

// fallback forecasts, without validation, a series too short to
// validate: by the median of the combined candidates that accept it (one
// alone if only one does), otherwise by the richest single candidate that
// accepts it (the last listed first). For a strongly seasonal series only
// fits with a seasonal component count, and seasonal naive joins the
// median: with under three seasons of history the other members often
// cannot fit a seasonal form at all (ETS's AICc penalty for m seasonal
// states on two seasons is prohibitive), and last year's values are then
// the steadiest estimate of the seasonal pattern. Without it a lone
// seasonal ARIMA decided such series (README's accuracy section measures
// the change on seattle_tmax).
func (f *Family) fallback(y []float64, opt models.FitOptions, note string) (models.Model, error) {
	seasonal := numeric.StronglySeasonal(y, max(opt.Period, 1))
	var parts []models.Model
	var names, errs []string
	for k, c := range f.cands {
		member := slices.Contains(f.members, k)
		if !member && !(seasonal && c.Name() == naive.SeasonalNaiveName) {
			continue
		}
		if mod, err := c.Fit(y, opt); err == nil && (!seasonal || hasSeason(mod)) && clearOfPole(mod, horizon(opt)) {
			parts = append(parts, mod)
			names = append(names, c.Name())
		}
	}
	switch len(parts) {
	case 0:
	case 1:
		return &Fitted{Model: parts[0], winner: -1, combined: -1, note: join(note, "chose "+names[0]+" without validation")}, nil
	default:
		return &Fitted{Model: Median(parts...), winner: -1, combined: -1, note: join(note, "chose the median of "+strings.Join(names, ", ")+" without validation")}, nil
	}
	for i := len(f.cands) - 1; i >= 0; i-- {
		mod, err := f.cands[i].Fit(y, opt)
		switch {
		case err != nil:
		case seasonal && !hasSeason(mod):
			err = fmt.Errorf("the series is strongly seasonal and the fitted form is not")
		case !clearOfPole(mod, horizon(opt)):
			err = errors.New(poleNote)
		}
		if err == nil {
			return &Fitted{Model: mod, winner: -1, combined: -1, note: join(note, "chose "+f.cands[i].Name()+" without validation")}, nil
		}
		errs = append(errs, f.cands[i].Name()+": "+err.Error())
	}
	return nil, inputerr.New("auto: no candidate family can fit this series (%s)", strings.Join(errs, "; "))
}
