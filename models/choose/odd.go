package choose

import (
	"fmt"

	"trueup/models"
	"trueup/models/intermittent"
	"trueup/models/naive"
)

// shortMean is the longest series forecast by its mean: with three points
// or fewer neither a trend nor a season can be told from noise (our
// choice).
const shortMean = 3

// oddSeries handles, before any validation, the series the candidates
// cannot carry sensibly: a history without variation (constant or all
// zero) and very short series get the mean method (naive.Mean, whose
// interval stays non-degenerate); intermittent series — non-negative with
// an average interval between non-zero values above
// intermittent.ADICutoff — get the SBA method. ok is false for every other
// series.
func oddSeries(y []float64, m int) (models.Model, bool) {
	flat := true
	for _, v := range y {
		flat = flat && v == y[0]
	}
	var fam models.Family
	var why string
	switch {
	case flat:
		fam, why = naive.Mean{}, "the history has no variation"
	case len(y) <= shortMean:
		fam, why = naive.Mean{}, fmt.Sprintf("%d observations are too few for a trend or a season", len(y))
	case intermittent.Intermittent(y):
		fam, why = intermittent.SBA{}, "intermittent series (on average more than 1.32 periods between non-zero values)"
	default:
		return nil, false
	}
	mod, err := fam.Fit(y, models.FitOptions{Period: m})
	if err != nil {
		return nil, false
	}
	return &Fitted{Model: mod, winner: -1, combined: -1, note: "chose " + fam.Name() + " without validation: " + why}, true
}
