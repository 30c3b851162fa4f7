package ets

import "trueup/models"

var _ models.Simulator = (*Fitted)(nil)

// PathForm implements models.Simulator. The forms with additive errors
// and no multiplicative seasonality (class 1 of Hyndman, Koehler, Ord &
// Snyder 2008, ch. 6) are linear in their innovations: ψ_0 = 1 and ψ_j =
// c_j = α + βφ_j + γ·[j ≡ 0 mod m] (HKOS eq. 6.1, Table 6.1). The others
// are simulated by the recursions themselves (models.SmoothingForm), with
// relative innovations (y − ŷ)/ŷ for multiplicative errors.
func (f *Fitted) PathForm(h int) *models.PathForm {
	if f.spec.Error == Add && f.spec.Season != Mul {
		psi := make([]float64, h)
		if h > 0 {
			psi[0] = 1
			copy(psi[1:], f.cj(h))
		}
		return &models.PathForm{Mean: f.point(h), Psi: psi, Innovations: append([]float64(nil), f.resid...)}
	}
	phi := 1.0
	if f.spec.Damped() {
		phi = f.par.Phi
	}
	sf := &models.SmoothingForm{MulError: f.spec.Error == Mul, MulSeason: f.spec.Season == Mul,
		Level: f.level, Trend: f.trend, Alpha: f.par.Alpha, Beta: f.par.Beta, Gamma: f.par.Gamma, Phi: phi}
	if !f.spec.HasTrend() {
		sf.Trend, sf.Beta = 0, 0
	}
	if f.spec.Seasonal() {
		sf.Season = append([]float64(nil), f.season...)
	} else {
		sf.Gamma = 0
	}
	innov := append([]float64(nil), f.resid...)
	if sf.MulError {
		for t := range innov {
			innov[t] /= f.yhat[t]
		}
	}
	return &models.PathForm{Smoothing: sf, Innovations: innov}
}
