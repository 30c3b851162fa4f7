package engine

import (
	"context"
	"encoding/json"
	"errors"
	"math"
	"slices"

	"trueup/accuracy"
	"trueup/inputerr"
)

// Interval calibration from backtest errors: split conformal prediction
// (Vovk, Gammerman & Shafer 2005, Algorithmic Learning in a Random World,
// ch. 4; Lei, G'Sell, Rinaldo, Tibshirani & Wasserman 2018, JASA
// 113(523), §2.2, with the scores normalised by the model's spread, their
// "locally weighted" form). The score of a past error is |e|/sd, e the
// error of a node's forecast and sd its reconciled standard deviation;
// for interval level L the factor is the ⌈(n+1)·L/100⌉-th smallest of n
// scores over z_L, the Gaussian quantile the interval uses, so the
// calibrated interval is forecast ± factor·z_L·sd. Factors are kept per
// node level, horizon group and interval level, because intervals miss
// differently at the total and at a store, and one step and a year ahead.

// CalibrationMin is the fewest past errors a factor is estimated from: a
// horizon group with fewer takes the level's factor over all steps, and a
// level with fewer keeps factor 1 (uncalibrated). Below 19 errors the
// 95% factor is the largest score (conformal needs n ≥ L/(100 − L)
// scores for level L to have a finite quantile; Lei et al. 2018, §2.2).
const CalibrationMin = 10

// horizonGroups splits steps 1…h into three groups of about equal length
// (1–4, 5–8, 9–12 for h = 12), as [first, last] steps.
func horizonGroups(h int) [][2]int {
	size := (h + 2) / 3
	var out [][2]int
	for a := 1; a <= h; a += size {
		out = append(out, [2]int{a, min(a+size-1, h)})
	}
	return out
}

// Calibration holds interval factors per node level, horizon group and
// interval level.
type Calibration struct {
	// Levels are the node levels; Groups the horizon groups as [first,
	// last] steps; Intervals the interval levels in percent.
	Levels    []string
	Groups    [][2]int
	Intervals []float64
	// Factor[l][g][q] multiplies z·sd of node level l, horizon group g and
	// interval level q; Count[l][g] is the number of past errors behind it
	// (0 where the factor is 1 for want of errors, and the level's count
	// where it was pooled over steps).
	Factor [][][]float64
	Count  [][]int
}

// MarshalJSON writes the factors as one object per node level and
// horizon group: its first and last step, the past errors behind it
// (errors) and one factor per interval (factor_80, factor_95).
func (c *Calibration) MarshalJSON() ([]byte, error) {
	var rows []map[string]any
	for l, level := range c.Levels {
		for g, gr := range c.Groups {
			row := map[string]any{"level": level, "first_step": gr[0], "last_step": gr[1], "errors": c.Count[l][g]}
			byInterval(row, "factor", c.Intervals, c.Factor[l][g])
			rows = append(rows, row)
		}
	}
	return json.Marshal(map[string]any{"factors": rows})
}

// calScores collects normalised scores |e|/sd per node level and step.
type calScores struct {
	levels []string
	h      int
	by     map[string][][]float64 // level → step (0-based) → scores
}

func newCalScores(levels []string, h int) *calScores {
	return &calScores{levels: levels, h: h, by: map[string][][]float64{}}
}

func (c *calScores) add(level string, k int, e, sd float64) {
	if !(sd > 0) || math.IsNaN(e) || math.IsInf(sd, 0) {
		return
	}
	steps := c.by[level]
	if steps == nil {
		steps = make([][]float64, c.h)
		c.by[level] = steps
	}
	steps[k] = append(steps[k], math.Abs(e)/sd)
}

// fit returns the conformal factors of the collected scores.
func (c *calScores) fit(intervals []float64) *Calibration {
	cal := &Calibration{Levels: c.levels, Groups: horizonGroups(c.h), Intervals: intervals}
	for _, level := range c.levels {
		steps := c.by[level]
		var all []float64
		for _, s := range steps {
			all = append(all, s...)
		}
		slices.Sort(all)
		pooled := conformal(all, intervals)
		var fl [][]float64
		var cl []int
		for _, g := range cal.Groups {
			var xs []float64
			for k := g[0] - 1; k < g[1] && steps != nil; k++ {
				xs = append(xs, steps[k]...)
			}
			slices.Sort(xs)
			f, n := conformal(xs, intervals), len(xs)
			if f == nil {
				f, n = pooled, len(all)
			}
			if f == nil {
				f, n = ones(len(intervals)), 0
			}
			fl, cl = append(fl, f), append(cl, n)
		}
		cal.Factor, cal.Count = append(cal.Factor, fl), append(cal.Count, cl)
	}
	return cal
}

// conformal returns, for each interval level, the conformal quantile of
// the sorted scores over z_L; nil with fewer than CalibrationMin scores.
func conformal(sorted []float64, intervals []float64) []float64 {
	n := len(sorted)
	if n < CalibrationMin {
		return nil
	}
	out := make([]float64, len(intervals))
	for q, L := range intervals {
		r := int(math.Ceil(float64(n+1)*L/100)) - 1
		out[q] = sorted[min(r, n-1)] / Quantile(L)
	}
	return out
}

func ones(n int) []float64 {
	out := make([]float64, n)
	for i := range out {
		out[i] = 1
	}
	return out
}

// factor returns the factor of node level, step k (0-based) and interval
// level index q; 1 for a level it has no factor for.
func (c *Calibration) factor(level string, k, q int) float64 {
	if c == nil {
		return 1
	}
	l := slices.Index(c.Levels, level)
	if l < 0 {
		return 1
	}
	for g, gr := range c.Groups {
		if k+1 >= gr[0] && k+1 <= gr[1] {
			return c.Factor[l][g][q]
		}
	}
	return 1
}

// CalibrationCheck compares one method's intervals with and without
// calibration at the backtest's later origins: at each origin of the
// second half (from the second when there are two or three), factors are
// estimated from the errors of earlier origins whose target periods fall
// before it (what a forecast at that origin could have known), and
// applied to it.
type CalibrationCheck struct {
	Method string `json:"method"`
	// Origins is the number of origins scored (the later half).
	Origins int `json:"origins"`
	// Levels holds, per node level, the coverage and the interval score
	// (over the scale) per interval level, uncalibrated and calibrated,
	// over those origins and all steps.
	Levels []CalibrationLevel `json:"levels"`
	// Helps says whether calibration brought the coverage nearer to
	// nominal (the mean of |coverage − nominal| over node levels and
	// interval levels is lower, and its largest is no higher) without
	// raising the mean interval score (over node levels) at any interval
	// level, a proper score (Gneiting & Raftery 2007, §6.2): the test
	// Reconciliation.Calibrate applies.
	Helps bool `json:"helps"`
}

// CalibrationLevel is one node level's row of a CalibrationCheck. Its
// values are per interval in Intervals (percent); run.json names each
// by its interval (coverage_80, calibrated_interval_score_95).
type CalibrationLevel struct {
	Level              string
	Coverage           []float64
	CalibratedCoverage []float64
	IntervalScore      []float64
	CalibratedInterval []float64
	Intervals          []float64
	// CoverageByHorizon and CalibratedByHorizon are the coverage per
	// horizon group (Groups: first and last step, from horizonGroups of
	// the backtest's horizon) and interval.
	CoverageByHorizon   [][]float64
	CalibratedByHorizon [][]float64
	Groups              [][2]int
}

// MarshalJSON writes the row with each value named by its interval, and
// the coverage by horizon as one object per horizon group, with its
// first and last step.
func (c CalibrationLevel) MarshalJSON() ([]byte, error) {
	m := map[string]any{"level": c.Level}
	byInterval(m, "coverage", c.Intervals, c.Coverage)
	byInterval(m, "calibrated_coverage", c.Intervals, c.CalibratedCoverage)
	byInterval(m, "interval_score", c.Intervals, c.IntervalScore)
	byInterval(m, "calibrated_interval_score", c.Intervals, c.CalibratedInterval)
	groups := func(cov [][]float64) []map[string]any {
		out := make([]map[string]any, len(cov))
		for g := range cov {
			out[g] = map[string]any{"first_step": c.Groups[g][0], "last_step": c.Groups[g][1]}
			byInterval(out[g], "coverage", c.Intervals, cov[g])
		}
		return out
	}
	m["coverage_by_horizon"] = groups(c.CoverageByHorizon)
	m["calibrated_coverage_by_horizon"] = groups(c.CalibratedByHorizon)
	return json.Marshal(m)
}

// collectScores adds the scores of method's errors at origins from..to-1
// whose target period is before period index before (the panel column of
// a later origin's first forecast).
func (res *BacktestResult) collectScores(c *calScores, method string, from, to, before int) {
	for o := from; o < to; o++ {
		org := res.Origins[o]
		r := org.Results[method]
		if r == nil || r.Solution.Variance == nil {
			continue
		}
		st := org.Structure
		for i, node := range st.Nodes {
			if !org.Scored(i) {
				continue
			}
			level := st.Levels[node.Level].Name
			for k := 0; k < res.Horizon && org.Periods+k < before; k++ {
				c.add(level, k, org.Error(method, i, k), math.Sqrt(math.Max(r.Solution.Variance[i][k], 0)))
			}
		}
	}
}

// checkCalibration fills res.Calibration: per method, the later origins
// scored with and without factors estimated before each of them.
func (res *BacktestResult) checkCalibration() {
	res.Calibration = nil
	if len(res.Origins) < 2 {
		return
	}
	levels := res.Structure.LevelNames()
	L := len(res.Levels)
	for _, m := range res.Methods {
		first := max(1, len(res.Origins)/2)
		chk := CalibrationCheck{Method: m, Origins: len(res.Origins) - first}
		type acc struct {
			n                  float64
			cov, ccov, is, cis []float64
			gn                 []float64
			gcov, gccov        [][]float64
		}
		groups := horizonGroups(res.Horizon)
		groupOf := make([]int, res.Horizon)
		for g, gr := range groups {
			for k := gr[0] - 1; k < gr[1]; k++ {
				groupOf[k] = g
			}
		}
		sums := map[string]*acc{}
		for o := first; o < len(res.Origins); o++ {
			org := res.Origins[o]
			c := newCalScores(levels, res.Horizon)
			res.collectScores(c, m, 0, o, org.Periods)
			cal := c.fit(res.Levels)
			r := org.Results[m]
			st := org.Structure
			for i, node := range st.Nodes {
				if !org.Scored(i) || r.Solution.Variance == nil {
					continue
				}
				level := st.Levels[node.Level].Name
				a := sums[level]
				if a == nil {
					a = &acc{cov: make([]float64, L), ccov: make([]float64, L), is: make([]float64, L), cis: make([]float64, L),
						gn: make([]float64, len(groups))}
					for range groups {
						a.gcov, a.gccov = append(a.gcov, make([]float64, L)), append(a.gccov, make([]float64, L))
					}
					sums[level] = a
				}
				s := org.ScaleMAE[i]
				for k := 0; k < res.Horizon; k++ {
					y := org.Actual[i][k]
					g := groupOf[k]
					a.n++
					a.gn[g]++
					for q, lv := range res.Levels {
						// Uncalibrated: the run's own intervals (with
						// error-quantiles, their shape factors).
						z := Quantile(lv)
						lo, hi := r.bounds(i, k, z*r.Shape.factor(level, k, q))
						clo, chi := r.bounds(i, k, z*cal.factor(level, k, q))
						if accuracy.Covered(lo, hi, y) {
							a.cov[q]++
							a.gcov[g][q]++
						}
						if accuracy.Covered(clo, chi, y) {
							a.ccov[q]++
							a.gccov[g][q]++
						}
						a.is[q] += accuracy.IntervalScore(lo, hi, y, lv) / s
						a.cis[q] += accuracy.IntervalScore(clo, chi, y, lv) / s
					}
				}
			}
		}
		helps := len(sums) > 0
		var worst, cworst, meanErr, meanCErr float64
		meanIS, meanCIS := make([]float64, L), make([]float64, L)
		for _, level := range levels {
			a := sums[level]
			if a == nil {
				continue
			}
			row := CalibrationLevel{Level: level, Coverage: make([]float64, L), CalibratedCoverage: make([]float64, L),
				IntervalScore: make([]float64, L), CalibratedInterval: make([]float64, L), Intervals: res.Levels, Groups: groups}
			for g := range groups {
				cov, ccov := make([]float64, L), make([]float64, L)
				for q := range cov {
					cov[q], ccov[q] = a.gcov[g][q]/a.gn[g], a.gccov[g][q]/a.gn[g]
				}
				row.CoverageByHorizon, row.CalibratedByHorizon = append(row.CoverageByHorizon, cov), append(row.CalibratedByHorizon, ccov)
			}
			for q := range res.Levels {
				row.Coverage[q], row.CalibratedCoverage[q] = a.cov[q]/a.n, a.ccov[q]/a.n
				row.IntervalScore[q], row.CalibratedInterval[q] = a.is[q]/a.n, a.cis[q]/a.n
				nominal := res.Levels[q] / 100
				e, ce := math.Abs(row.Coverage[q]-nominal), math.Abs(row.CalibratedCoverage[q]-nominal)
				worst, cworst = math.Max(worst, e), math.Max(cworst, ce)
				meanErr += e
				meanCErr += ce
				meanIS[q] += row.IntervalScore[q] / float64(len(sums))
				meanCIS[q] += row.CalibratedInterval[q] / float64(len(sums))
			}
			chk.Levels = append(chk.Levels, row)
		}
		for q := range res.Levels {
			if !(meanCIS[q] <= meanIS[q]) {
				helps = false
			}
		}
		if !(meanCErr < meanErr) || !(cworst <= worst) {
			helps = false
		}
		chk.Helps = helps
		res.Calibration = append(res.Calibration, chk)
	}
}

// CalibrationRecord is how a forecast run calibrated its intervals
// (Reconciliation.Calibrate), kept in run.json.
type CalibrationRecord struct {
	// Origins is the number of backtest origins behind it.
	Origins int `json:"origins"`
	// Applied says whether the factors were applied: only when Check
	// says calibration helped at the backtest's later origins.
	Applied bool             `json:"applied"`
	Check   CalibrationCheck `json:"check"`
	// Calibration holds the factors applied, from the errors of every
	// origin (nil when not applied).
	Calibration *Calibration `json:"calibration,omitempty"`
}

// calibrate runs a backtest of the run's method (label) at k origins on
// the same data and options and, when its CalibrationCheck says
// calibration helps, sets res.Calibration from the errors of all k
// origins (every one of them known at the run's last period). A
// forecast with calibration costs about k + 1 forecasts.
func calibrate(ctx context.Context, d *Data, opt Options, res *Result, label string, k int) error {
	bo := opt
	bo.Progress, bo.Reconcile = nil, Reconciliation{}
	bt, err := Backtest(ctx, d, BacktestOptions{Options: bo, Origins: k, Compare: []string{label}})
	var ie *inputerr.Error
	if inputerr.OptionOf(err) == "Origins" && errors.As(err, &ie) {
		return inputerr.ForOption("Calibrate", "calibrating intervals from %d backtest origins: %s", k, ie.Msg)
	}
	if err != nil {
		return err
	}
	rec := &CalibrationRecord{Origins: k}
	if len(bt.Calibration) == 1 {
		rec.Check = bt.Calibration[0]
		rec.Applied = rec.Check.Helps
	}
	if rec.Applied {
		c := newCalScores(bt.Structure.LevelNames(), bt.Horizon)
		bt.collectScores(c, label, 0, len(bt.Origins), math.MaxInt)
		rec.Calibration = c.fit(bt.Levels)
		res.Calibration = rec.Calibration
	}
	res.Report.Reconcile.Calibration = rec
	return nil
}
