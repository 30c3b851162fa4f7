package ets

import "trueup/models"

var _ models.Simulator = (*Fitted)(nil)

// PathForm implements models.Simulator for the forms with additive
// errors and no multiplicative seasonality (class 1 of Hyndman, Koehler,
// Ord & Snyder 2008, ch. 6), which are linear in their innovations: ψ_0 =
// 1 and ψ_j = c_j = α + βφ_j + γ·[j ≡ 0 mod m] (HKOS eq. 6.1, Table 6.1).
// Forms with multiplicative errors or seasonality are not linear in the
// innovations: nil.
func (f *Fitted) PathForm(h int) *models.PathForm {
	if f.spec.Error != Add || f.spec.Season == Mul {
		return nil
	}
	psi := make([]float64, h)
	if h > 0 {
		psi[0] = 1
		copy(psi[1:], f.cj(h))
	}
	return &models.PathForm{Mean: f.point(h), Psi: psi, Innovations: append([]float64(nil), f.resid...)}
}
