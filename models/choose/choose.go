// Package choose picks a model family per series by out-of-sample
// accuracy. Candidates — automatic ARIMA, automatic ETS, seasonal naive,
// drift and the equal-weight combination of ARIMA and ETS — are fitted at
// a few rolling forecast origins (Tashman 2000, "Out-of-sample tests of
// forecasting accuracy", IJF 16:437–450), scored at the run's horizon by
// the mean absolute scaled error (Hyndman & Koehler 2006, "Another look at
// measures of forecast accuracy", IJF 22:679–688), and the winner is refitted
// on all the data. The fitted model records every candidate's score and
// why the winner won.
package choose

import (
	"fmt"
	"math"
	"sort"
	"strings"

	"trueup/inputerr"
	"trueup/models"
)

// Name is the registry name of the automatic choice.
const Name = "auto"

// Options tune the validation. The zero value uses 3 origins one period
// apart.
type Options struct {
	// Origins is the number of forecast origins (default 3).
	Origins int
	// Step is the distance between successive origins (default 1).
	Step int
}

// Family chooses among candidate families by rolling-origin MASE. It
// implements models.Family under the name "auto".
type Family struct {
	cands []models.Family
	combo [2]int // indices of the families averaged, or −1
	opt   Options
}

var _ models.Family = (*Family)(nil)

// New returns the automatic choice among the given families plus the
// equal-weight combination of the first two (pass the ARIMA and ETS
// families first). A nil family is skipped, and the combination is
// offered only when both of the first two are present. Candidates are
// listed simplest first — seasonal naive, drift, ETS, ARIMA, combination —
// and ties go to the earlier one.
func New(arimaFam, etsFam, seasonalNaive, drift models.Family, opt Options) *Family {
	f := &Family{opt: opt, combo: [2]int{-1, -1}}
	for _, c := range []models.Family{seasonalNaive, drift, etsFam, arimaFam} {
		if c != nil {
			f.cands = append(f.cands, c)
		}
	}
	if arimaFam != nil && etsFam != nil {
		f.combo = [2]int{len(f.cands) - 1, len(f.cands) - 2}
	}
	if f.opt.Origins <= 0 {
		f.opt.Origins = 3
	}
	if f.opt.Step <= 0 {
		f.opt.Step = 1
	}
	return f
}

// Name implements models.Family.
func (*Family) Name() string { return Name }

// Score is one candidate's validation result. MASE is the mean over the
// origins of the MASE at the run's horizon; it is +Inf when the candidate
// failed at some origin (Err says why). Spec is the form fitted at the
// last origin.
type Score struct {
	Family string
	Spec   string
	MASE   float64
	Err    string
}

// Fit implements models.Family: validate every candidate, refit the winner
// on all of y, and return it wrapped with the scores (see Fitted).
func (f *Family) Fit(y []float64, opt models.FitOptions) (models.Model, error) {
	for i, v := range y {
		if math.IsNaN(v) || math.IsInf(v, 0) {
			return nil, inputerr.New("observation %d is not a finite number", i+1)
		}
	}
	m := max(opt.Period, 1)
	h := opt.Horizon
	if h <= 0 {
		h = m
	}
	scores, origins, hv, note := f.validate(y, m, h, opt)
	if len(scores) == 0 {
		return f.fallback(y, opt, note)
	}
	win := 0
	for i, s := range scores {
		if s.MASE < scores[win].MASE {
			win = i
		}
	}
	if math.IsInf(scores[win].MASE, 1) {
		return f.fallback(y, opt, join(note, "every candidate failed in validation"))
	}
	model, err := f.fitCandidate(win, y, opt)
	if err != nil {
		// The winner failed on the full data: take the next best.
		order := rank(scores)
		for _, i := range order[1:] {
			if math.IsInf(scores[i].MASE, 1) {
				break
			}
			if model, err = f.fitCandidate(i, y, opt); err == nil {
				note = join(note, fmt.Sprintf("%s won validation but failed on the full series (%v); next best used", scores[win].Family, err))
				win = i
				break
			}
		}
		if err != nil {
			return nil, fmt.Errorf("auto: refit of every validated candidate failed: %w", err)
		}
	}
	return &Fitted{Model: model, scores: scores, winner: win, origins: origins, horizon: hv, note: note}, nil
}

// fitCandidate fits candidate i (the combination is index len(cands)).
func (f *Family) fitCandidate(i int, y []float64, opt models.FitOptions) (models.Model, error) {
	if i < len(f.cands) {
		return f.cands[i].Fit(y, opt)
	}
	a, err := f.cands[f.combo[0]].Fit(y, opt)
	if err != nil {
		return nil, err
	}
	b, err := f.cands[f.combo[1]].Fit(y, opt)
	if err != nil {
		return nil, err
	}
	return Combine(a, b), nil
}

func (f *Family) candidateName(i int) string {
	if i < len(f.cands) {
		return f.cands[i].Name()
	}
	return f.cands[f.combo[0]].Name() + "+" + f.cands[f.combo[1]].Name()
}

// minTrain is the shortest training window used for validation: three full
// seasons, and at least ten observations. Seasonal ETS needs two full
// seasons plus room for its m+4 parameters and seasonal ARIMA loses m
// observations to differencing, so shorter windows would validate weaker,
// non-seasonal stand-ins for the forms fitted on the full series (our
// choice; with two seasons plus four, seasonal naive won the validation of
// 72-month series that ETS forecasts better).
func minTrain(m int) int {
	if m > 1 {
		return max(3*m, 10)
	}
	return 10
}

// validate scores every candidate at up to Origins origins. The horizon is
// shortened, and then the number of origins reduced, when the series is
// too short for the full design; with no room at all it returns no scores.
func (f *Family) validate(y []float64, m, h int, opt models.FitOptions) ([]Score, int, int, string) {
	T := len(y)
	k, step := f.opt.Origins, f.opt.Step
	// Fewer origins first, then a shorter horizon, until the earliest
	// training window is long enough.
	fits := func(k, hv int) bool { return T-hv-(k-1)*step >= minTrain(m) }
	hv := h
	for k > 1 && !fits(k, hv) {
		k--
	}
	for hv > 1 && !fits(k, hv) {
		hv--
	}
	if !fits(k, hv) {
		return nil, 0, 0, fmt.Sprintf("series of %d observations too short for validation", T)
	}
	var note string
	if k < f.opt.Origins || hv < h {
		note = fmt.Sprintf("validation shortened to %d origin(s) at horizon %d (series of %d observations)", k, hv, T)
	}
	n := len(f.cands)
	if f.combo[0] >= 0 {
		n++
	}
	scores := make([]Score, n)
	sums := make([]float64, n)
	for i := range scores {
		scores[i].Family = f.candidateName(i)
	}
	vopt := opt
	vopt.Horizon = hv
	for o := 0; o < k; o++ {
		end := T - hv - (k-1-o)*step
		train, test := y[:end], y[end:end+hv]
		scale := maseScale(train, m)
		fits := make([]models.Model, len(f.cands))
		for i, c := range f.cands {
			if scores[i].Err != "" {
				continue
			}
			mod, err := c.Fit(train, vopt)
			if err != nil {
				scores[i].Err = err.Error()
				continue
			}
			fits[i] = mod
			scores[i].Spec = mod.Spec()
			sums[i] += mase(mod, test, scale)
		}
		if ci := len(f.cands); ci < n && scores[ci].Err == "" {
			a, b := fits[f.combo[0]], fits[f.combo[1]]
			if a == nil || b == nil {
				scores[ci].Err = "a component failed"
			} else {
				c := Combine(a, b)
				scores[ci].Spec = c.Spec()
				sums[ci] += mase(c, test, scale)
			}
		}
	}
	for i := range scores {
		if scores[i].Err != "" {
			scores[i].MASE = math.Inf(1)
		} else {
			scores[i].MASE = sums[i] / float64(k)
		}
	}
	return scores, k, hv, note
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

// mase is the mean absolute scaled error of mod's forecasts for test.
func mase(mod models.Model, test []float64, scale float64) float64 {
	mean, _ := mod.Forecast(len(test))
	s := 0.0
	for i, v := range test {
		e := math.Abs(v - mean[i])
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

// fallback fits, without validation, the richest candidate that accepts
// the series (ARIMA, then ETS, drift, seasonal naive).
func (f *Family) fallback(y []float64, opt models.FitOptions, note string) (models.Model, error) {
	var errs []string
	for i := len(f.cands) - 1; i >= 0; i-- {
		mod, err := f.cands[i].Fit(y, opt)
		if err == nil {
			return &Fitted{Model: mod, winner: -1, note: join(note, "chose "+f.cands[i].Name()+" without validation")}, nil
		}
		errs = append(errs, f.cands[i].Name()+": "+err.Error())
	}
	return nil, inputerr.New("auto: no candidate family can fit this series (%s)", strings.Join(errs, "; "))
}
