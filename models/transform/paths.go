package transform

import "trueup/models"

var _ models.Simulator = (*Fitted)(nil)

// PathForm implements models.Simulator: the inner model's form on the
// transformed scale, with the inverse transform applied to each path
// (monotone, so the paths' quantiles are the back-transformed ones). Nil
// when the inner model has no form, is itself transformed or is a
// combination.
func (f *Fitted) PathForm(h int) *models.PathForm {
	s, ok := f.inner.(models.Simulator)
	if !ok {
		return nil
	}
	pf := s.PathForm(h)
	if pf == nil || pf.BoxCox || pf.Members != nil {
		return nil
	}
	if !f.tr.Identity {
		pf.BoxCox, pf.Lambda = true, f.tr.Lambda
	}
	return pf
}
