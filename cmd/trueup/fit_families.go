package main

import (
	"fmt"
	"io"
	"strings"

	"trueup/models"
	"trueup/models/arima"
	"trueup/models/choose"
	"trueup/models/ets"
	"trueup/models/transform"
)

// fitFamilyNames lists the values of --family.
var fitFamilyNames = []string{choose.Name, arima.Name, "ets", "snaive", "drift"}

// resolveFitFamily checks --family, --model, --transform and --constant
// together and returns the family to use. Without --family the family is
// the one --model is written in, or arima without --model.
func resolveFitFamily(fl *fitFlags) (string, error) {
	name := fl.family
	if fl.model != "" {
		byModel := arima.Name
		if strings.HasPrefix(strings.ToUpper(strings.TrimSpace(fl.model)), "ETS") {
			byModel = "ets"
		}
		if name != "" && name != byModel {
			return "", fmt.Errorf("--model %q is a %s model, but --family is %s", fl.model, byModel, name)
		}
		name = byModel
		if name == "ets" {
			if _, err := ets.ParseSpec(fl.model); err != nil {
				return "", fmt.Errorf("--model: %w", err)
			}
		} else if _, err := arima.ParseSpec(fl.model); err != nil {
			return "", fmt.Errorf("--model: %w", err)
		}
	}
	if name == "" {
		name = arima.Name
	}
	if _, ok := fitFamilies[name]; !ok {
		return "", fmt.Errorf("--family: %q is not one of %s", name, strings.Join(fitFamilyNames, ", "))
	}
	kind, err := transform.ParseKind(fl.transform)
	if err != nil {
		return "", fmt.Errorf("--transform: %w", err)
	}
	if name == arima.Name && kind == transform.BoxCox {
		return "", fmt.Errorf("--transform boxcox is not available with --family arima (use none or log)")
	}
	if name == choose.Name && kind != transform.None {
		return "", fmt.Errorf("--transform: --family auto sets the transform of each candidate itself (Box-Cox for ARIMA); leave --transform at none")
	}
	if fl.constant && name != arima.Name {
		return "", fmt.Errorf("--constant applies to ARIMA models only")
	}
	return name, nil
}

// transformed wraps fam in the --transform of the flags.
func transformed(fam models.Family, fl *fitFlags) models.Family {
	kind, _ := transform.ParseKind(fl.transform)
	if kind == transform.None {
		return fam
	}
	return transform.Family{Inner: fam, Opt: transform.Options{Kind: kind}}
}

// fitETS fits the fixed ETS --model, or chooses the form by AICc.
func fitETS(y []float64, period int, fl *fitFlags) (models.Model, error) {
	var fam models.Family = ets.Family{}
	if fl.model != "" {
		spec, err := ets.ParseSpec(fl.model)
		if err != nil {
			return nil, err
		}
		fam = etsSpecFamily{spec}
	}
	return transformed(fam, fl).Fit(y, models.FitOptions{Period: period, Horizon: fl.horizon})
}

// etsSpecFamily fits one fixed ETS form.
type etsSpecFamily struct{ spec ets.Spec }

func (etsSpecFamily) Name() string { return "ets" }
func (f etsSpecFamily) Fit(y []float64, opt models.FitOptions) (models.Model, error) {
	return ets.FitSpec(y, f.spec, opt.Period)
}

// fitNaive returns the fitter of a naive family.
func fitNaive(fam models.Family) func([]float64, int, *fitFlags) (models.Model, error) {
	return func(y []float64, period int, fl *fitFlags) (models.Model, error) {
		return transformed(fam, fl).Fit(y, models.FitOptions{Period: period, Horizon: fl.horizon})
	}
}

// fitAuto runs the automatic choice among ARIMA (on the Box–Cox scale),
// ETS, seasonal naive, drift and the ARIMA+ETS combination, validated at
// the run's horizon (choose.Standard).
func fitAuto(y []float64, period int, fl *fitFlags) (models.Model, error) {
	return choose.Standard(choose.Options{}).Fit(y, models.FitOptions{Period: period, Horizon: fl.horizon})
}

// modelFields are the family-specific JSON fields of any model the fit
// command produces: the automatic choice adds its candidates and reason to
// the winner's fields, a transform adds its λ to the inner model's, and
// ETS gives its smoothing parameters and initial states.
func modelFields(m models.Model) []jsonField {
	switch x := m.(type) {
	case *choose.Fitted:
		cands := make([]map[string]any, 0, len(x.Scores()))
		for _, s := range x.Scores() {
			c := map[string]any{"family": s.Family, "spec": s.Spec, "mase": finite(s.MASE)}
			if s.Err != "" {
				c["error"] = s.Err
			}
			cands = append(cands, c)
		}
		return append(modelFields(x.Winner()),
			jsonField{"candidates", cands},
			jsonField{"reason", x.Reason()})
	case *transform.Fitted:
		fields := modelFields(x.Inner())
		p := x.Params()
		return setField(setField(fields, "transform", p["transform"]), "lambda", p["lambda"])
	case *ets.Fitted:
		p := x.Params()
		return []jsonField{
			{"period", p["period"]},
			{"alpha", p["alpha"]},
			{"beta", p["beta"]},
			{"gamma", p["gamma"]},
			{"phi", p["phi"]},
			{"initial", p["initial"]},
			{"transform", "none"},
			{"lambda", nil},
		}
	case *arima.Fitted:
		return setField(arimaFields(x), "lambda", nil)
	case *choose.Combination:
		a, b := x.Components()
		comp := func(c models.Model) map[string]any {
			out := map[string]any{"family": c.Family(), "spec": c.Spec()}
			for _, f := range modelFields(c) {
				out[f.key] = f.value
			}
			return out
		}
		return []jsonField{{"components", []any{comp(a), comp(b)}}, {"weights", []float64{0.5, 0.5}}}
	}
	return []jsonField{{"transform", "none"}, {"lambda", nil}}
}

// setField replaces the value of key, or appends it.
func setField(fields []jsonField, key string, v any) []jsonField {
	for i := range fields {
		if fields[i].key == key {
			fields[i].value = v
			return fields
		}
	}
	return append(fields, jsonField{key, v})
}

// writeModelText prints the smoothing parameters of an ETS model, the
// transform's λ, and the automatic choice's candidates and reason, for the
// text output of trueup fit (ARIMA coefficients are printed by
// writeFitText).
func writeModelText(w io.Writer, m models.Model) {
	switch x := m.(type) {
	case *choose.Fitted:
		writeModelText(w, x.Winner())
		fmt.Fprintf(w, "  chosen: %s\n", x.Reason())
		for _, s := range x.Scores() {
			score := "failed: " + s.Err
			if s.Err == "" {
				score = fmt.Sprintf("validation MASE %.3f", s.MASE)
			}
			fmt.Fprintf(w, "    %-10s %-40s %s\n", s.Family, s.Spec, score)
		}
	case *transform.Fitted:
		writeModelText(w, x.Inner())
		if !x.Transform().Identity {
			fmt.Fprintf(w, "  transform %s\n", x.Transform())
		}
	case *ets.Fitted:
		p := x.Parameters()
		fmt.Fprintf(w, "  alpha %.4f", p.Alpha)
		if x.Form().HasTrend() {
			fmt.Fprintf(w, "  beta %.4f", p.Beta)
		}
		if x.Form().Seasonal() {
			fmt.Fprintf(w, "  gamma %.4f", p.Gamma)
		}
		if x.Form().Damped() {
			fmt.Fprintf(w, "  phi %.4f", p.Phi)
		}
		fmt.Fprintln(w)
	}
}
