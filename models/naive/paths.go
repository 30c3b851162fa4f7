package naive

import "trueup/models"

var _ models.Simulator = (*Fitted)(nil)

// PathForm implements models.Simulator: the last value and the random
// walk with drift have ψ_j = 1 for every j (the drift's estimation error,
// which Forecast's variance carries, is left out); the seasonal naive
// method ψ_j = 1 at multiples of m, 0 elsewhere (Hyndman & Athanasopoulos,
// Forecasting: Principles and Practice, 3rd ed., §5.5); the mean ψ_0 = 1
// only, or the random walk's weights for a flat history (see Mean).
func (f *Fitted) PathForm(h int) *models.PathForm {
	mean, _ := f.Forecast(h)
	psi := make([]float64, h)
	for j := range psi {
		switch {
		case f.family == "drift" || f.family == "last" || (f.family == MeanName && f.flat):
			psi[j] = 1
		case f.family == MeanName:
			if j == 0 {
				psi[j] = 1
			}
		case j%f.m == 0:
			psi[j] = 1
		}
	}
	return &models.PathForm{Mean: mean, Psi: psi, Innovations: append([]float64(nil), f.resid...)}
}
