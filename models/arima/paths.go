package arima

import "trueup/models"

var _ models.Simulator = (*Fitted)(nil)

// PathForm implements models.Simulator: the ψ-weights of the whole
// model, differencing included, φ(B)Φ(B^m)(1−B)^d(1−B^m)^D·y_t =
// θ(B)Θ(B^m)·ε_t (Box, Jenkins & Reinsel, Time Series Analysis, 4th ed.,
// §5.2.1), the point forecasts on the modelled scale and the innovations
// on that scale (the log's with the log transform). The ψ-form ignores the
// uncertainty of the final state that Forecast's exact variances carry,
// which vanishes as the sample grows.
func (f *Fitted) PathForm(h int) *models.PathForm {
	mean, _ := f.forecastTransformed(h, f.future, true)
	// π(B) = (1 − Σ φ_i B^i)·(1 − Σ δ_j B^j), written as 1 − Σ π_i B^i.
	prod := make([]float64, len(f.phi)+len(f.delta)+1)
	for i := -1; i < len(f.phi); i++ {
		a := 1.0
		if i >= 0 {
			a = -f.phi[i]
		}
		for j := -1; j < len(f.delta); j++ {
			d := 1.0
			if j >= 0 {
				d = -f.delta[j]
			}
			prod[i+j+2] += a * d
		}
	}
	ar := make([]float64, len(prod)-1)
	for i := range ar {
		ar[i] = -prod[i+1]
	}
	pf := &models.PathForm{Mean: mean, Psi: models.PsiFromARMA(ar, f.rv[1:], h)}
	if f.spec.Log {
		pf.BoxCox = true
		pf.Innovations = append([]float64(nil), f.lnRes...)
	} else {
		pf.Innovations = append([]float64(nil), f.resid...)
	}
	return pf
}
