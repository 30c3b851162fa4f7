// Package families assembles the registry of every model family trueup
// ships, so that commands look families up by the name given to --family.
package families

import (
	"trueup/models"
	"trueup/models/naive"
)

// Default is the family used when --family is not given.
const Default = "snaive"

// Registry returns a registry holding every family.
func Registry() *models.Registry {
	r := &models.Registry{}
	r.Register(naive.SeasonalNaive{})
	r.Register(naive.Drift{})
	r.Register(naive.LastValue{})
	return r
}

// Fallbacks are tried in order when the chosen family cannot fit a node
// (too short a history, say): each needs fewer observations than the last.
var Fallbacks = []models.Family{naive.SeasonalNaive{}, naive.Drift{}, naive.LastValue{}}
