package choose

import (
	"trueup/models/arima"
	"trueup/models/ets"
	"trueup/models/naive"
	"trueup/models/transform"
)

// Standard is the automatic choice with the candidate configuration
// measured in bench/ets/accuracy.md: automatic ARIMA on the Box–Cox scale
// with λ by Guerrero's method (ARIMA has no multiplicative form; the
// transform gives it the proportional seasonal swings that the
// multiplicative ETS forms model directly), automatic ETS on the raw
// scale, seasonal naive, drift and the ARIMA+ETS average.
func Standard(opt Options) *Family {
	arimaBC := transform.Family{Inner: arima.Family{}, Opt: transform.Options{Kind: transform.BoxCox}}
	return New(arimaBC, ets.Family{}, naive.SeasonalNaive{}, naive.Drift{}, opt)
}
