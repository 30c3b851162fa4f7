package engine

import (
	"fmt"
	"math"
	"math/rand/v2"
	"strings"

	"trueup/accuracy"
)

// scoreSum accumulates one Score.
type scoreSum struct {
	n                      int
	ase, rmsse, bias, crps float64
	coverage, intervalSc   []float64
}

func (s *scoreSum) add(ase, rmsse, bias, crps float64, cov, is []float64) {
	if s.coverage == nil {
		s.coverage, s.intervalSc = make([]float64, len(cov)), make([]float64, len(is))
	}
	s.n++
	s.ase += ase
	s.rmsse += rmsse
	s.bias += bias
	s.crps += crps
	for l := range cov {
		s.coverage[l] += cov[l]
		s.intervalSc[l] += is[l]
	}
}

// score fills res.Scores and res.Headline. Per node, origin and step the
// scaled error is q = (a − f)/s with s the node's in-sample seasonal naive
// MAE at the origin (Hyndman & Koehler 2006); MASE averages |q|, Bias
// averages q, RMSSE averages, over node-origin pairs, √(mean over steps of
// (a − f)²/s₂) with s₂ the seasonal naive MSE (at a single step, |a − f|/√s₂).
// Coverage averages 1{lo ≤ a ≤ hi}; the interval score (Gneiting & Raftery
// 2007, eq. 43) and the CRPS of the Gaussian N(f, variance) are divided
// by s. The energy score of the joint forecast is in energy.
func (res *BacktestResult) score() {
	h, L := res.Horizon, len(res.Levels)
	type key struct {
		method, level string
		step          int
	}
	sums := map[key]*scoreSum{}
	get := func(k key) *scoreSum {
		s := sums[k]
		if s == nil {
			s = &scoreSum{}
			sums[k] = s
		}
		return s
	}
	cov, is := make([]float64, L), make([]float64, L)
	allCov, allIS := make([]float64, L), make([]float64, L)
	for _, org := range res.Origins {
		st := org.Structure
		for _, m := range res.Methods {
			r := org.Results[m]
			for i, node := range st.Nodes {
				if !org.Scored(i) {
					continue
				}
				level := st.Levels[node.Level].Name
				s1, s2 := org.ScaleMAE[i], org.ScaleMSE[i]
				var sumASE, sumBias, sumSq, sumCRPS float64
				for l := range allCov {
					allCov[l], allIS[l] = 0, 0
				}
				for k := 0; k < h; k++ {
					a := org.Actual[i][k]
					e := a - r.Solution.Forecast[i][k]
					for l, lv := range res.Levels {
						lo, hi := r.Bounds(i, k, lv)
						cov[l] = 0
						if lo <= a && a <= hi {
							cov[l] = 1
						}
						is[l] = intervalScore(lo, hi, a, lv) / s1
						allCov[l] += cov[l] / float64(h)
						allIS[l] += is[l] / float64(h)
					}
					crps := nodeCRPS(r, i, k, a) / s1
					get(key{m, level, k + 1}).add(math.Abs(e)/s1, math.Abs(e)/math.Sqrt(s2), e/s1, crps, cov, is)
					sumCRPS += crps
					sumASE += math.Abs(e) / s1
					sumBias += e / s1
					sumSq += e * e / s2
				}
				fh := float64(h)
				get(key{m, level, 0}).add(sumASE/fh, math.Sqrt(sumSq/fh), sumBias/fh, sumCRPS/fh, allCov, allIS)
			}
		}
	}
	levels := res.Structure.LevelNames()
	res.Scores, res.Headline = nil, nil
	for _, m := range res.Methods {
		hl := Headline{Method: m, Coverage: make([]float64, L), IntervalScore: make([]float64, L), Intervals: res.Levels}
		nl := 0
		for _, level := range levels {
			for step := 0; step <= h; step++ {
				s := sums[key{m, level, step}]
				if s == nil {
					continue
				}
				n := float64(s.n)
				sc := Score{Level: level, Method: m, Step: step, Count: s.n, MASE: s.ase / n, RMSSE: s.rmsse / n,
					Bias: s.bias / n, CRPS: s.crps / n, Coverage: make([]float64, L), IntervalScore: make([]float64, L), Intervals: res.Levels}
				for l := 0; l < L; l++ {
					sc.Coverage[l], sc.IntervalScore[l] = s.coverage[l]/n, s.intervalSc[l]/n
				}
				res.Scores = append(res.Scores, sc)
				if step == 0 {
					nl++
					hl.MASE += sc.MASE
					hl.RMSSE += sc.RMSSE
					hl.Bias += sc.Bias
					hl.CRPS += sc.CRPS
					for l := 0; l < L; l++ {
						hl.Coverage[l] += sc.Coverage[l]
						hl.IntervalScore[l] += sc.IntervalScore[l]
					}
				}
			}
		}
		if nl > 0 {
			f := float64(nl)
			hl.MASE, hl.RMSSE, hl.Bias, hl.CRPS = hl.MASE/f, hl.RMSSE/f, hl.Bias/f, hl.CRPS/f
			for l := 0; l < L; l++ {
				hl.Coverage[l] /= f
				hl.IntervalScore[l] /= f
			}
		} else {
			hl.MASE, hl.RMSSE, hl.Bias, hl.CRPS = math.NaN(), math.NaN(), math.NaN(), math.NaN()
		}
		hl.EnergyScore, hl.EnergyByStep = res.energy(m)
		res.Headline = append(res.Headline, hl)
	}
}

// nodeCRPS is the CRPS of node i's Gaussian predictive distribution
// N(forecast, variance) at step k for the actual a (accuracy.CRPSGaussian),
// NaN without variances; with bootstrap intervals, that of the sample of
// reconciled draws (computed by scoreSampled).
func nodeCRPS(r *Result, i, k int, a float64) float64 {
	if r.Sampled != nil && r.Sampled.crps != nil {
		return r.Sampled.crps[i*r.Sampled.h+k]
	}
	if r.Solution.Variance == nil {
		return math.NaN()
	}
	return accuracy.CRPSGaussian(r.Solution.Forecast[i][k], math.Sqrt(math.Max(r.Solution.Variance[i][k], 0)), a)
}

// EnergyDraws is the number of draws of the joint distribution behind
// each energy score: its sampling error, relative, is about 1/√EnergyDraws
// of the spread term (common practice: a few hundred draws).
const EnergyDraws = 200

// energy returns method's energy score averaged over the origins that
// have one (BacktestOrigin.Energy): over all steps, and per step. NaN
// (nil) where none has.
func (res *BacktestResult) energy(method string) (float64, []float64) {
	h := res.Horizon
	byStep := make([]float64, h)
	count := 0
	for _, org := range res.Origins {
		es := org.Energy[method]
		if es == nil {
			continue
		}
		count++
		for k, v := range es {
			byStep[k] += v
		}
	}
	if count == 0 {
		return math.NaN(), nil
	}
	var all float64
	for k := range byStep {
		byStep[k] /= float64(count)
		all += byStep[k] / float64(h)
	}
	return all, byStep
}

// scoreEnergy sets o.Energy[method] to the energy score
// (accuracy.EnergyScore) of the method's joint forecast of every scored
// node at each step, each node's values divided by its scale as in the
// other scores (so that the total does not outweigh everything), from
// EnergyDraws draws of the result's joint Gaussian (reconcile.Joint)
// seeded by origin and method position, so that the same backtest gives
// the same scores. It then drops the joint distribution, so that a
// backtest holds one origin's at a time. Nothing is set without a joint
// distribution or a scored node.
func (o *BacktestOrigin) scoreEnergy(method string, origin, position, h int) {
	r := o.Results[method]
	joint := r.Solution.Joint
	r.Solution.Joint = nil
	if r.Sampled != nil && r.Sampled.samples != nil {
		o.scoreSampled(method, h)
		return
	}
	if joint == nil {
		return
	}
	var scored []int
	for i := range o.Structure.Nodes {
		if o.Scored(i) {
			scored = append(scored, i)
		}
	}
	if len(scored) == 0 {
		return
	}
	rng := rand.New(rand.NewPCG(uint64(origin), uint64(position)))
	d := len(scored)
	draws := make([]float64, EnergyDraws*d)
	e := make([]float64, joint.Nodes())
	y := make([]float64, d)
	out := make([]float64, h)
	for k := 0; k < h; k++ {
		for s := 0; s < EnergyDraws; s++ {
			joint.Draw(e, k, rng)
			x := draws[s*d : (s+1)*d]
			for q, i := range scored {
				x[q] = (r.Solution.Forecast[i][k] + e[i]) / o.ScaleMAE[i]
			}
		}
		for q, i := range scored {
			y[q] = o.Actual[i][k] / o.ScaleMAE[i]
		}
		out[k] = accuracy.EnergyScore(draws, y)
	}
	if o.Energy == nil {
		o.Energy = map[string][]float64{}
	}
	o.Energy[method] = out
}

// intervalScore is accuracy.IntervalScore, NaN when the bounds are.
func intervalScore(lo, hi, y, level float64) float64 {
	if math.IsNaN(lo) || math.IsNaN(hi) {
		return math.NaN()
	}
	return accuracy.IntervalScore(lo, hi, y, level)
}

// LevelScore returns the all-steps score of method at level, if any.
func (res *BacktestResult) LevelScore(level, method string) (Score, bool) {
	for _, s := range res.Scores {
		if s.Step == 0 && s.Level == level && s.Method == method {
			return s, true
		}
	}
	return Score{}, false
}

// HeadlineOf returns the headline of method, if it ran.
func (res *BacktestResult) HeadlineOf(method string) (Headline, bool) {
	for _, h := range res.Headline {
		if h.Method == method {
			return h, true
		}
	}
	return Headline{}, false
}

// recommend picks the coherent method with the lowest headline MASE (the
// base forecasts do not add up, so they are a yardstick, not a choice),
// says by how much it wins and where it loses.
func (res *BacktestResult) recommend() {
	rec := Recommendation{VersusBase: math.NaN()}
	best, second := -1, -1
	for i, h := range res.Headline {
		if h.Method == BaseMethod || math.IsNaN(h.MASE) {
			continue
		}
		switch {
		case best < 0 || h.MASE < res.Headline[best].MASE:
			best, second = i, best
		case second < 0 || h.MASE < res.Headline[second].MASE:
			second = i
		}
	}
	if best < 0 {
		res.Recommendation = rec
		return
	}
	w := res.Headline[best]
	rec.Method, rec.MASE = w.Method, w.MASE
	var why []string
	if second >= 0 {
		r := res.Headline[second]
		rec.RunnerUp = r.Method
		rec.Margin = 100 * (r.MASE - w.MASE) / r.MASE
		why = append(why, fmt.Sprintf("headline MASE %.3f, %.2f%% below %s (%.3f)", w.MASE, rec.Margin, r.Method, r.MASE))
	} else {
		why = append(why, fmt.Sprintf("headline MASE %.3f, the only coherent method that ran", w.MASE))
	}
	if b, ok := res.HeadlineOf(BaseMethod); ok {
		rec.VersusBase = 100 * (b.MASE - w.MASE) / b.MASE
		if rec.VersusBase >= 0 {
			why = append(why, fmt.Sprintf("%.2f%% below the base forecasts (%.3f)", rec.VersusBase, b.MASE))
		} else {
			why = append(why, fmt.Sprintf("%.2f%% above the base forecasts (%.3f), which do not add up", -rec.VersusBase, b.MASE))
		}
	}
	rec.Losses = []LevelLoss{}
	for _, level := range res.Structure.LevelNames() {
		mine, ok := res.LevelScore(level, w.Method)
		if !ok {
			continue
		}
		loss := LevelLoss{Level: level, MASE: mine.MASE, BestIs: mine.MASE}
		for _, m := range res.Methods {
			if s, ok := res.LevelScore(level, m); ok && s.MASE < loss.BestIs {
				loss.Best, loss.BestIs = m, s.MASE
			}
		}
		if loss.Best != "" {
			rec.Losses = append(rec.Losses, loss)
		}
	}
	if len(rec.Losses) > 0 {
		var parts []string
		for _, l := range rec.Losses {
			parts = append(parts, fmt.Sprintf("%s (%s %.4f vs %.4f)", l.Level, l.Best, l.BestIs, l.MASE))
		}
		why = append(why, "beaten at "+strings.Join(parts, ", "))
	} else {
		why = append(why, "best at every level")
	}
	rec.Reason = strings.Join(why, "; ")
	res.Recommendation = rec
}

// scoreSampled scores a method with bootstrap intervals from its
// reconciled draws: the CRPS of every node and step (the energy score in
// one dimension, accuracy.EnergyScore, over all draws) and the energy
// score of the joint forecast of every scored node at each step from the
// first EnergyDraws draws (each an independent joint path), values
// divided by each node's scale as in scoreEnergy. It then drops the draws.
func (o *BacktestOrigin) scoreSampled(method string, h int) {
	r := o.Results[method]
	sp := r.Sampled
	defer func() { sp.samples = nil }()
	n := len(o.Structure.Nodes)
	sp.crps = make([]float64, n*h)
	x := make([]float64, sp.Draws)
	for i := 0; i < n; i++ {
		for k := 0; k < h; k++ {
			for d, v := range sp.draws(i, k) {
				x[d] = float64(v)
			}
			sp.crps[i*h+k] = accuracy.EnergyScore(x, []float64{o.Actual[i][k]})
		}
	}
	var scored []int
	for i := range o.Structure.Nodes {
		if o.Scored(i) {
			scored = append(scored, i)
		}
	}
	if len(scored) == 0 {
		return
	}
	N, d := min(EnergyDraws, sp.Draws), len(scored)
	draws := make([]float64, N*d)
	y := make([]float64, d)
	out := make([]float64, h)
	for k := 0; k < h; k++ {
		for q, i := range scored {
			all := sp.draws(i, k)
			for s := 0; s < N; s++ {
				draws[s*d+q] = float64(all[s]) / o.ScaleMAE[i]
			}
			y[q] = o.Actual[i][k] / o.ScaleMAE[i]
		}
		out[k] = accuracy.EnergyScore(draws, y)
	}
	if o.Energy == nil {
		o.Energy = map[string][]float64{}
	}
	o.Energy[method] = out
}
