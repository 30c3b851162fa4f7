package theta

import "trueup/models"

var _ models.Simulator = (*Fitted)(nil)

// PathForm implements models.Simulator: SES with drift is ARIMA(0,1,1)
// with drift, ψ_0 = 1 and ψ_j = α (Hyndman & Billah 2003), on the
// seasonally adjusted scale; a multiplicative adjustment multiplies step
// k by its seasonal index, as Forecast's variances do. The innovations
// are the one-step errors on the adjusted scale.
func (f *Fitted) PathForm(h int) *models.PathForm {
	psi := make([]float64, h)
	for j := range psi {
		psi[j] = f.alpha
	}
	if h > 0 {
		psi[0] = 1
	}
	pf := &models.PathForm{Mean: f.PointForecast(h), Psi: psi, Innovations: append([]float64(nil), f.resid...)}
	if f.season == Multiplicative {
		pf.Scale = make([]float64, h)
		for k := range pf.Scale {
			pf.Scale[k] = f.seasonal(f.n + k)
		}
	}
	return pf
}
