package families

import (
	"strings"

	"trueup/inputerr"
	"trueup/models"
	"trueup/models/arima"
	"trueup/models/choose"
	"trueup/models/ets"
	"trueup/models/transform"
)

// Spec names a model family and, optionally, a fixed form within it, as
// plain data that can be sent to another process. The zero value is the
// automatic choice (Default).
type Spec struct {
	// Family is a registered family name; "" means the family the Form is
	// written in, or Default without a Form.
	Family string
	// Form fixes the model within the family; "" lets the family choose
	// its form. ARIMA forms are written as arima.ParseSpec reads them,
	// e.g. "ARIMA(0,1,1)(0,1,1) m=12" or "ARIMA(1,1,0) + drift" (without
	// "m=" the period comes from the data); ETS forms in the published
	// notation, e.g. "ETS(M,Ad,M)". A form implies its family.
	Form string
	// Transform is "none", "log" or "boxcox" (λ by Guerrero's method); ""
	// means none. The automatic choice takes none: it sets the transform
	// of each candidate itself (Box–Cox for ARIMA).
	Transform string
	// Constant asks a fixed ARIMA form for a mean (d+D = 0) or a drift
	// (d+D = 1); the automatic ARIMA search decides the constant itself.
	Constant bool
}

// Resolve returns the family the spec describes, or an *inputerr.Error
// whose Option names the field at fault: "Family", "Model" (the Form),
// "Transform" or "Constant".
func (s Spec) Resolve() (models.Family, error) {
	form := strings.TrimSpace(s.Form)
	if form != "" && printedForm(form) {
		return s.resolvePrinted(form)
	}
	name := s.Family
	if form != "" {
		written := formFamily(form)
		if name != "" && name != written {
			return nil, inputerr.ForOption("Family", "model %q is written as a %s model, but the family is %q", form, written, name)
		}
		name = written
	}
	if name == "" {
		name = Default
	}
	kind, err := transform.ParseKind(s.Transform)
	if err != nil {
		return nil, &inputerr.Error{Option: "Transform", Err: err}
	}
	if s.Constant && (name != arima.Name || form == "") {
		return nil, inputerr.ForOption("Constant", "a constant applies to a fixed ARIMA form only (the automatic ARIMA search decides the constant itself)")
	}
	var fam models.Family
	switch name {
	case choose.Name:
		if kind != transform.None {
			return nil, inputerr.ForOption("Transform", "the automatic choice sets each candidate's transform itself (Box-Cox for ARIMA); leave the transform at none")
		}
		return choose.Standard(choose.Options{}), nil
	case arima.Name:
		return resolveARIMA(form, kind, s.Constant)
	case ets.Name:
		fam = ets.Family{}
		if form != "" {
			sp, err := ets.ParseSpec(form)
			if err != nil {
				return nil, &inputerr.Error{Option: "Model", Err: err}
			}
			fam = ets.Fixed{Spec: sp}
		}
	default:
		if fam, err = Registry().Lookup(name); err != nil {
			return nil, &inputerr.Error{Option: "Family", Err: err}
		}
	}
	return withTransform(fam, kind), nil
}

// resolveARIMA builds the ARIMA family: the automatic order search, or the
// fixed form. A log transform is the model's own (it is then fitted and
// reported on the log scale, as the form "log ARIMA(…)" says); Box–Cox
// wraps the family.
func resolveARIMA(form string, kind transform.Kind, constant bool) (models.Family, error) {
	logged := kind == transform.Log
	if form == "" {
		return withTransform(arima.Family{Options: arima.AutoOptions{Log: logged}}, nonLog(kind)), nil
	}
	sp, err := arima.ParseSpec(form)
	if err != nil {
		return nil, &inputerr.Error{Option: "Model", Err: err}
	}
	if sp.Log && kind == transform.BoxCox {
		return nil, inputerr.ForOption("Transform", "model %q is already on the log scale; it cannot also take a Box-Cox transform", form)
	}
	sp.Log = sp.Log || logged
	if (sp.Constant || constant) && sp.D+sp.SD > 1 {
		// Checked here, before any data is read: every series would fail
		// it, and a fixed form is never swapped for another one.
		opt, what := "Model", "its \"+ drift\""
		if constant && !sp.Constant {
			opt, what = "Constant", "a constant"
		}
		return nil, inputerr.ForOption(opt, "model %q differences d+D = %d times; %s needs d+D ≤ 1 "+
			"(a mean at d+D = 0, a drift at d+D = 1): drop it or a difference, e.g. ARIMA(%d,%d,%d)(%d,%d,%d) + drift",
			form, sp.D+sp.SD, what, sp.P, max(1-sp.SD, 0), sp.Q, sp.SP, min(sp.SD, 1), sp.SQ)
	}
	sp.Constant = sp.Constant || constant
	return withTransform(arima.Fixed{Spec: sp}, nonLog(kind)), nil
}

// nonLog returns kind, except that the log, which ARIMA applies itself,
// becomes none.
func nonLog(kind transform.Kind) transform.Kind {
	if kind == transform.Log {
		return transform.None
	}
	return kind
}

// withTransform wraps fam in the transform of the given kind.
func withTransform(fam models.Family, kind transform.Kind) models.Family {
	if kind == transform.None {
		return fam
	}
	return transform.Family{Inner: fam, Opt: transform.Options{Kind: kind}}
}

// formFamily is the family a form is written in: ETS forms start with
// "ETS", everything else is read as ARIMA (whose parser explains what it
// expected).
func formFamily(form string) string {
	if strings.HasPrefix(strings.ToUpper(form), "ETS") {
		return ets.Name
	}
	return arima.Name
}

// resolvePrinted resolves a form written as the models table prints it
// (readForm). The family, if given, must be the form's; the transform
// may be added when the form has none; a constant belongs in the form.
func (s Spec) resolvePrinted(form string) (models.Family, error) {
	fam, err := readForm(form)
	if err != nil {
		return nil, err
	}
	if s.Family != "" && s.Family != fam.Name() {
		return nil, inputerr.ForOption("Family", "model %q is a %s model, but the family is %q", form, fam.Name(), s.Family)
	}
	if s.Constant {
		return nil, inputerr.ForOption("Constant", "a constant applies to a fixed ARIMA form only: write it in the form (\"+ drift\", \"+ mean\")")
	}
	kind, err := transform.ParseKind(s.Transform)
	if err != nil {
		return nil, &inputerr.Error{Option: "Transform", Err: err}
	}
	if _, wrapped := fam.(transform.Family); wrapped && kind != transform.None {
		return nil, inputerr.ForOption("Transform", "model %q already says its transform", form)
	}
	return withTransform(fam, kind), nil
}
