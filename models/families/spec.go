package families

import (
	"trueup/inputerr"
	"trueup/models"
)

// Spec names a model family and, optionally, a fixed form within it, as
// plain data that can be sent to another process. The zero value is the
// automatic choice (Default).
type Spec struct {
	// Family is a registered family name; "" means Default.
	Family string
	// Form fixes the model within the family, e.g. "ARIMA(0,1,1)(0,1,1)"
	// or "ETS(M,Ad,M)"; "" lets the family choose its form.
	Form string
	// Transform is "none", "log" or "boxcox"; "" means the family's own
	// choice (none, except the automatic choice, which uses Box–Cox for
	// its ARIMA candidate).
	Transform string
	// Constant asks a fixed ARIMA form for a mean (d+D = 0) or a drift
	// (d+D = 1).
	Constant bool
}

// Resolve returns the family the spec describes, or an input error naming
// the field at fault.
func (s Spec) Resolve() (models.Family, error) {
	name := s.Family
	if name == "" {
		name = Default
	}
	if s.Form != "" || (s.Transform != "" && s.Transform != "none") || s.Constant {
		return nil, inputerr.ForOption("Model", "fixed forms, transforms and constants are not available here yet")
	}
	f, err := Registry().Lookup(name)
	if err != nil {
		return nil, inputerr.ForOption("Family", "%v", err)
	}
	return f, nil
}
