// Package families assembles the registry of every model family trueup
// ships, so that commands look families up by the name given to --family.
package families

import (
	"trueup/models"
	"trueup/models/arima"
	"trueup/models/choose"
	"trueup/models/ets"
	"trueup/models/intermittent"
	"trueup/models/naive"
	"trueup/models/theta"
)

// Default is the family used when --family is not given: the per-node
// choice among ARIMA, ETS, Theta, their median and the naive benchmarks.
const Default = choose.Name

// Registry returns a registry holding every family.
func Registry() *models.Registry {
	r := &models.Registry{}
	// The automatic choice in the configuration whose accuracy README
	// reports (go run ./bench/accuracy).
	r.Register(choose.Standard(choose.Options{}))
	r.Register(arima.Family{})
	r.Register(ets.Family{})
	r.Register(theta.Family{})
	r.Register(intermittent.SBA{})
	r.Register(naive.SeasonalNaive{})
	r.Register(naive.Drift{})
	r.Register(naive.LastValue{})
	return r
}

// Fallbacks are tried in order when the chosen family cannot fit a node
// (too short a history, say): each needs fewer observations than the last.
var Fallbacks = []models.Family{naive.SeasonalNaive{}, naive.Drift{}, naive.LastValue{}}
