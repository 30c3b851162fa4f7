package choose

import (
	"trueup/models"
	"trueup/models/arima"
	"trueup/models/ets"
	"trueup/models/naive"
	"trueup/models/theta"
	"trueup/models/transform"
)

// Standard is the automatic choice trueup runs, measured in README's
// accuracy table (go run ./bench/accuracy): seasonal naive, drift (offered only
// for series without detected seasonality), Theta, automatic ETS on the
// raw scale, automatic ARIMA on the Box–Cox scale with λ by Guerrero's
// method (ARIMA has no multiplicative form; the transform gives it the
// proportional seasonal swings that multiplicative ETS models directly),
// and the median of ETS, ARIMA and Theta.
func Standard(opt Options) *Family {
	arimaBC := transform.Family{Inner: arima.Family{Options: arima.AutoOptions{RankByCSS: true}}, Opt: transform.Options{Kind: transform.BoxCox}}
	return New(opt,
		Candidate{Family: naive.SeasonalNaive{}},
		Candidate{Family: naive.Drift{}, NonSeasonal: true},
		Candidate{Family: theta.Family{}, Combine: true},
		Candidate{Family: ets.Family{}, Combine: true},
		Candidate{Family: arimaBC, Combine: true},
	)
}

// freeze returns the family that re-estimates mod's form — its ARIMA
// order, ETS form, Theta seasonal adjustment and transform — without
// searching again (the ARIMA and ETS likelihood searches start from
// mod's estimates); fam itself for families with nothing to search.
func freeze(mod models.Model, fam models.Family) models.Family {
	switch m := mod.(type) {
	case *arima.Fitted:
		return arima.Fixed{Spec: m.Form(), Start: m}
	case *ets.Fitted:
		return ets.Fixed{Spec: m.Form(), Start: m}
	case *theta.Fitted:
		return theta.Fixed{Season: m.Seasonality()}
	case *transform.Fitted:
		inner := fam
		if tf, ok := fam.(transform.Family); ok {
			inner = tf.Inner
		}
		tr := m.Transform()
		opt := transform.Options{}
		switch {
		case tr.Identity:
		case tr.Lambda == 0:
			opt.Kind = transform.Log
		default:
			lambda := tr.Lambda
			opt.Kind, opt.Lambda = transform.BoxCox, &lambda
		}
		if tf, ok := fam.(transform.Family); ok {
			opt.BiasAdjust = tf.Opt.BiasAdjust
		}
		return transform.Family{Inner: freeze(m.Inner(), inner), Opt: opt}
	}
	return fam
}

// pointForecaster is implemented by models that can give point forecasts
// without computing variances (simulated ones, for multiplicative ETS).
type pointForecaster interface {
	PointForecast(h int) []float64
}

// pointForecast returns mod's point forecasts for steps 1..h.
func pointForecast(mod models.Model, h int) []float64 {
	if p, ok := mod.(pointForecaster); ok {
		return p.PointForecast(h)
	}
	mean, _ := mod.Forecast(h)
	return mean
}

// hasSeason reports whether a fitted model carries a seasonal component:
// seasonal ARIMA terms, differences or Fourier pairs, a seasonal ETS form,
// Theta with seasonal adjustment, seasonal naive, or a combination of
// which a member does. Models of other families are taken to.
func hasSeason(mod models.Model) bool {
	switch m := mod.(type) {
	case *arima.Fitted:
		s := m.Form()
		return s.SP > 0 || s.SD > 0 || s.SQ > 0 || s.Fourier > 0
	case *ets.Fitted:
		return m.Form().Seasonal()
	case *theta.Fitted:
		return m.Seasonality() != theta.NotSeasonal
	case *transform.Fitted:
		return hasSeason(m.Inner())
	case *naive.Fitted:
		return m.Family() == naive.SeasonalNaiveName
	case *Combination:
		for _, p := range m.parts {
			if hasSeason(p) {
				return true
			}
		}
		return false
	}
	return true
}

// clearOfPole reports whether mod's forecast distribution over steps
// 1..h stays clear of the pole of a Box–Cox back-transform with λ < 0
// (transform.Fitted.ClearOfPole); a combination is clear when every
// member is, models without a transform always are.
func clearOfPole(mod models.Model, h int) bool {
	switch m := mod.(type) {
	case *transform.Fitted:
		return m.ClearOfPole(h)
	case *Combination:
		for _, p := range m.parts {
			if !clearOfPole(p, h) {
				return false
			}
		}
	}
	return true
}
