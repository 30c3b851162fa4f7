package engine

import (
	"encoding/json"
	"fmt"
	"math"
	"trueup/internal/words"
)

// BacktestReport is the content of a backtest's run.json.
type BacktestReport struct {
	Version string         `json:"version"`
	Command string         `json:"command"`
	Input   InputReport    `json:"input"`
	Options map[string]any `json:"options"`
	// Origins lists each origin's first forecast period and the number of
	// history periods before it.
	Origins []OriginReport  `json:"origins"`
	Methods []string        `json:"methods"`
	Skipped []SkippedMethod `json:"skipped"`
	// Headline is each method's mean over levels of its level mean
	// scores; LevelScores the level means (all steps).
	Headline       []Headline     `json:"headline"`
	LevelScores    []Score        `json:"level_scores"`
	Recommendation Recommendation `json:"recommendation"`
	// Calibration is, per method, the check of conformal interval
	// calibration at the later origins (see CalibrationCheck).
	Calibration []CalibrationCheck `json:"interval_calibration_check"`
	// Incoherence is, per level, the mean over aggregates, splits,
	// origins and steps of |base − Σ children's base| over the
	// aggregate's scale.
	Incoherence []LevelIncoherence `json:"base_incoherence"`
	// Cancellation is, for the recommended method, per aggregate level
	// and split, the mean over aggregates, origins and steps of
	// 1 − |parent error| / Σ |child errors| (0: the children's errors add
	// up; near 1: they cancel).
	Cancellation []LevelCancellation `json:"cancellation"`
	// Helped and Hurt are the nodes where the recommended method changed
	// the MASE of the base forecasts most, down and up.
	Helped   []NodeScore        `json:"helped_most"`
	Hurt     []NodeScore        `json:"hurt_most"`
	Timings  map[string]float64 `json:"timings_seconds"`
	Warnings []string           `json:"warnings"`
	// Files lists the other files of the output set with their SHA-256,
	// filled in by the writer.
	Files []FileRecord `json:"files"`
}

// OriginReport describes one origin.
type OriginReport struct {
	FirstForecast string `json:"first_forecast_period"`
	HistoryEnd    string `json:"last_history_period"`
	Periods       int    `json:"history_periods"`
	Nodes         int    `json:"nodes"`
}

// LevelCancellation is the mean cancellation of the children's errors
// of one level's parents over one split, named as the contributions
// table names them.
type LevelCancellation struct {
	ParentLevel string  `json:"parent_level"`
	ChildLevel  string  `json:"child_level"`
	Mean        float64 `json:"mean"`
}

// LevelIncoherence is the mean scaled incoherence of a level's base
// forecasts.
type LevelIncoherence struct {
	Level string  `json:"level"`
	Mean  float64 `json:"mean_scaled_abs"`
}

func (r *BacktestReport) fill(res *BacktestResult, opt Options, origins, every int) {
	r.Options = map[string]any{"family": familyOrDefault(opt.Model.Family), "model": opt.Model.Form, "transform": opt.Model.Transform,
		"season_length": res.Period, "horizon": res.Horizon, "intervals": res.Levels,
		"interval_method": intervalMethod(opt), "origins": origins, "every": every, "compare": append(append([]string{}, res.Methods...), skippedNames(res.Skipped)...)}
	for _, o := range res.Origins {
		r.Origins = append(r.Origins, OriginReport{FirstForecast: o.Start.String(), HistoryEnd: o.Start.Next(-1).String(),
			Periods: o.Periods, Nodes: len(o.Structure.Nodes)})
	}
	r.Methods = res.Methods
	r.Skipped = res.Skipped
	if r.Skipped == nil {
		r.Skipped = []SkippedMethod{}
	}
	r.Headline = res.Headline
	r.LevelScores = []Score{}
	for _, s := range res.Scores {
		if s.Step == 0 {
			r.LevelScores = append(r.LevelScores, s)
		}
	}
	r.Recommendation = res.Recommendation
	sums, counts := map[int]float64{}, map[int]int{}
	for _, in := range res.Attribution.Incoherence {
		lv := res.Origins[in.Origin].Structure.Nodes[in.Parent].Level
		if !math.IsNaN(in.ScaledAbs) && !math.IsInf(in.ScaledAbs, 0) {
			sums[lv] += in.ScaledAbs
			counts[lv]++
		}
	}
	r.Incoherence = []LevelIncoherence{}
	for l, lv := range res.Structure.Levels {
		if counts[l] > 0 {
			r.Incoherence = append(r.Incoherence, LevelIncoherence{Level: lv.Name, Mean: sums[l] / float64(counts[l])})
		}
	}
	r.Calibration = res.Calibration
	if r.Calibration == nil {
		r.Calibration = []CalibrationCheck{}
	}
	r.Cancellation = cancellation(res)
	r.Helped, r.Hurt = res.Attribution.Effects(res.Recommendation.Method, 5)
	if r.Helped == nil {
		r.Helped = []NodeScore{}
	}
	if r.Hurt == nil {
		r.Hurt = []NodeScore{}
	}
	r.Warnings = []string{}
	for _, s := range res.Skipped {
		r.Warnings = append(r.Warnings, fmt.Sprintf("method %s skipped: %s", s.Method, s.Reason))
	}
	last := res.Origins[len(res.Origins)-1]
	if n, m := len(res.Structure.Nodes), len(last.Structure.Nodes); n != m {
		r.Warnings = append(r.Warnings, fmt.Sprintf("%s of the %s opened after the last origin and %s not scored", words.Thousands(n-m), words.Count(n, "node", "nodes"), words.Agree(n-m, "is", "are")))
	}
}

func skippedNames(s []SkippedMethod) []string {
	out := make([]string, len(s))
	for i, x := range s {
		out[i] = x.Method
	}
	return out
}

// cancellation averages the cancellation of the recommended method's
// contributions per parent level and split (each parent, origin and step
// once).
func cancellation(res *BacktestResult) []LevelCancellation {
	type key struct{ parent, split int }
	sums, counts := map[key]float64{}, map[key]int{}
	seen := map[[4]int]bool{}
	for _, c := range res.Attribution.Contributions {
		if c.Method != res.Recommendation.Method {
			continue
		}
		st := res.Origins[c.Origin].Structure
		k := key{st.Nodes[c.Parent].Level, st.Nodes[c.Child].Level}
		id := [4]int{c.Origin, c.Step, c.Parent, k.split}
		if seen[id] {
			continue
		}
		seen[id] = true
		sums[k] += c.Cancellation
		counts[k]++
	}
	out := []LevelCancellation{}
	for p := range res.Structure.Levels {
		for s := range res.Structure.Levels {
			if n := counts[key{p, s}]; n > 0 {
				out = append(out, LevelCancellation{ParentLevel: res.Structure.Levels[p].Name,
					ChildLevel: res.Structure.Levels[s].Name, Mean: sums[key{p, s}] / float64(n)})
			}
		}
	}
	return out
}

// finite is x, or nil (JSON null) when x is NaN or infinite, which JSON
// cannot carry: a score with nothing to average, a comparison with a
// method that did not run.
func finite(x float64) any {
	if math.IsNaN(x) || math.IsInf(x, 0) {
		return nil
	}
	return x
}

func finites(xs []float64) []any {
	out := make([]any, len(xs))
	for i, x := range xs {
		out[i] = finite(x)
	}
	return out
}

// byInterval adds values[l] to m under name_L, L the interval
// intervals[l] as LevelLabel writes it (coverage_80, coverage_97_5):
// the names of the scores table's columns, so that every value says
// which interval it is about.
func byInterval(m map[string]any, name string, intervals, values []float64) {
	for l, v := range values {
		m[name+"_"+LevelLabel(intervals[l])] = finite(v)
	}
}

// MarshalJSON writes the score with null for a value it could not
// compute, and a null step for the score over all steps, as the scores
// table marks it.
func (s Score) MarshalJSON() ([]byte, error) {
	var step any = s.Step
	if s.Step == 0 {
		step = nil
	}
	m := map[string]any{"level": s.Level, "method": s.Method, "step": step, "count": s.Count,
		"mase": finite(s.MASE), "rmsse": finite(s.RMSSE), "bias": finite(s.Bias), "crps": finite(s.CRPS)}
	byInterval(m, "coverage", s.Intervals, s.Coverage)
	byInterval(m, "interval_score", s.Intervals, s.IntervalScore)
	return json.Marshal(m)
}

// MarshalJSON writes the headline with null for a value it could not
// compute.
func (h Headline) MarshalJSON() ([]byte, error) {
	m := map[string]any{"method": h.Method, "mase": finite(h.MASE), "rmsse": finite(h.RMSSE),
		"bias": finite(h.Bias), "crps": finite(h.CRPS),
		"energy_score": finite(h.EnergyScore), "energy_score_by_step": finites(h.EnergyByStep)}
	byInterval(m, "coverage", h.Intervals, h.Coverage)
	byInterval(m, "interval_score", h.Intervals, h.IntervalScore)
	return json.Marshal(m)
}

// MarshalJSON writes the recommendation; the comparison with base is
// null when base was not compared.
func (r Recommendation) MarshalJSON() ([]byte, error) {
	return json.Marshal(map[string]any{"method": r.Method, "mase": finite(r.MASE), "runner_up": r.RunnerUp,
		"margin_percent": finite(r.Margin), "versus_base_percent": finite(r.VersusBase), "losses": r.Losses,
		"reason": r.Reason})
}

// MarshalJSON writes the node score; the change is null without base.
func (s NodeScore) MarshalJSON() ([]byte, error) {
	return json.Marshal(map[string]any{"method": s.Method, "level": s.Level, "node": s.Node,
		"mase": finite(s.MASE), "change_from_base": finite(s.Change)})
}
