package choose

import (
	"fmt"
	"math"
	"strings"

	"trueup/models"
)

// Fitted is the refitted winner of the automatic choice. It behaves as the
// winning model (Family and Spec are the winner's) and adds the
// validation record.
type Fitted struct {
	models.Model
	scores   []Score
	winner   int // index into scores; −1 when chosen without validation
	combined int // index of the combination in scores, or −1
	margin   float64
	origins  int
	horizon  int
	note     string
}

var _ models.Model = (*Fitted)(nil)

// Winner returns the chosen model.
func (f *Fitted) Winner() models.Model { return f.Model }

// Scores returns every candidate's validation score.
func (f *Fitted) Scores() []Score { return append([]Score(nil), f.scores...) }

// Reason says which candidate won and why, for people reading the output.
func (f *Fitted) Reason() string {
	if f.winner < 0 {
		return f.note
	}
	w := f.scores[f.winner]
	var others []string
	for i, s := range f.scores {
		if i == f.winner {
			continue
		}
		if math.IsInf(s.MASE, 1) {
			others = append(others, s.Family+" "+short(s.Err))
		} else {
			others = append(others, fmt.Sprintf("%s %.3f", s.Family, s.MASE))
		}
	}
	why := "had the lowest validation MASE"
	switch {
	case f.winner == f.combined:
		why = fmt.Sprintf("is the default: no single method beat it by %.0f%%", 100*f.margin)
	case f.combined >= 0 && !math.IsInf(f.scores[f.combined].MASE, 1):
		why = fmt.Sprintf("beat the combination by more than %.0f%%", 100*f.margin)
	}
	return fmt.Sprintf("%s %s, validation MASE %.3f over %d origin(s) at horizon %d (others: %s)",
		w.Family, why, w.MASE, f.origins, f.horizon, strings.Join(others, ", "))
}

// Params implements models.Model: the winner's parameters plus "choice":
// {"winner": family, "reason": in words, "origins": validation origins,
// "validation_horizon": steps scored, "candidates": one {"family", "model",
// "mase" (null when the candidate failed), "error"} per candidate}. A
// series chosen for without validation (too short) has only "winner" and
// "reason".
func (f *Fitted) Params() map[string]any {
	inner := f.Model.Params()
	out := make(map[string]any, len(inner)+1)
	for k, v := range inner {
		out[k] = v
	}
	cands := make([]map[string]any, len(f.scores))
	for i, s := range f.scores {
		var m any
		if !math.IsInf(s.MASE, 1) {
			m = s.MASE
		}
		c := map[string]any{"family": s.Family, "model": s.Spec, "mase": m}
		if s.Err != "" {
			c["error"] = s.Err
		}
		cands[i] = c
	}
	choice := map[string]any{"winner": f.Model.Family(), "reason": f.Reason()}
	if f.winner >= 0 {
		choice["origins"] = f.origins
		choice["validation_horizon"] = f.horizon
		choice["candidates"] = cands
	}
	out["choice"] = choice
	return out
}

// Interval passes through the winner's own intervals when it has them, and
// otherwise gives the Gaussian mean ± z·sd.
func (f *Fitted) Interval(h int, level float64) (lo, hi []float64) {
	if iv, ok := f.Model.(interface {
		Interval(int, float64) ([]float64, []float64)
	}); ok {
		return iv.Interval(h, level)
	}
	if h <= 0 || !(level > 0 && level < 1) {
		return []float64{}, []float64{}
	}
	mean, v := f.Model.Forecast(h)
	z := math.Sqrt2 * math.Erfinv(level)
	lo, hi = make([]float64, h), make([]float64, h)
	for i := range mean {
		s := math.Sqrt(v[i])
		lo[i], hi[i] = mean[i]-z*s, mean[i]+z*s
	}
	return lo, hi
}

// Warning implements models.Model: fallbacks of the choice, then the
// winner's own warning.
func (f *Fitted) Warning() string { return join(f.note, f.Model.Warning()) }

// short is the first clause of an error message, for the reason line.
func short(err string) string {
	if strings.HasPrefix(err, "not offered") {
		return "not offered"
	}
	return "failed"
}

var _ models.Simulator = (*Fitted)(nil)

// PathForm implements models.Simulator with the winner's form (nil when
// the winner, the median combination say, has none).
func (f *Fitted) PathForm(h int) *models.PathForm {
	if s, ok := f.Model.(models.Simulator); ok {
		return s.PathForm(h)
	}
	return nil
}
