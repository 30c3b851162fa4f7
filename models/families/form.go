package families

import (
	"fmt"
	"strconv"
	"strings"

	"trueup/inputerr"
	"trueup/models"
	"trueup/models/choose"
	"trueup/models/ets"
	"trueup/models/intermittent"
	"trueup/models/naive"
	"trueup/models/theta"
	"trueup/models/transform"
)

// printedForm reports whether form is written the way the models table
// writes a form that the ARIMA and ETS readers alone cannot read: a
// median combination, a transform suffix (" on Box-Cox(lambda=…)", " on
// log") or a family other than ARIMA and ETS.
func printedForm(form string) bool {
	f := strings.ToLower(strings.TrimSpace(form))
	return strings.HasPrefix(f, "median of ") || strings.Contains(f, " on ") ||
		!(strings.HasPrefix(f, "ets") || strings.HasPrefix(f, "arima") || strings.HasPrefix(f, "log arima"))
}

// readForm reads a model form back as the models table prints it
// (models.Model.Spec), so that every printed form is accepted by
// --model: "median of A; B; C" fits each member and takes their median
// (choose.Median); " on Box-Cox(lambda=x)" fixes λ at x and " on log"
// takes logs; "Theta…" is the Theta method (its seasonal test chooses
// the adjustment again, which gives the printed one on the same series);
// "seasonal naive m=…", "random walk with drift", "last value", "mean"
// and "Croston–SBA (α=0.1)" are the benchmark families.
func readForm(form string) (models.Family, error) {
	text := strings.TrimSpace(form)
	bad := func(why string) (models.Family, error) {
		return nil, &inputerr.Error{Option: "Model", Err: fmt.Errorf("cannot read model %q: %s", form, why)}
	}
	if rest, ok := cutPrefixFold(text, "median of "); ok {
		var members []models.Family
		for _, part := range strings.Split(rest, ";") {
			if strings.TrimSpace(part) == "" {
				return bad("a median needs its members, separated by \";\"")
			}
			m, err := readForm(part)
			if err != nil {
				return nil, err
			}
			members = append(members, m)
		}
		return medianFamily{members: members}, nil
	}
	if i := strings.LastIndex(strings.ToLower(text), " on "); i >= 0 {
		inner, err := readForm(text[:i])
		if err != nil {
			return nil, err
		}
		tr := strings.TrimSpace(text[i+4:])
		if strings.EqualFold(tr, "log") {
			return transform.Family{Inner: inner, Opt: transform.Options{Kind: transform.Log}}, nil
		}
		arg, ok := cutPrefixFold(tr, "Box-Cox(lambda=")
		if !ok || !strings.HasSuffix(arg, ")") {
			return bad(`the transform after "on" is log or Box-Cox(lambda=…)`)
		}
		lambda, err := strconv.ParseFloat(strings.TrimSpace(strings.TrimSuffix(arg, ")")), 64)
		if err != nil {
			return bad("λ of Box-Cox(lambda=…) is not a number")
		}
		return transform.Family{Inner: inner, Opt: transform.Options{Kind: transform.BoxCox, Lambda: &lambda}}, nil
	}
	lower := strings.ToLower(text)
	switch {
	case strings.HasPrefix(lower, "ets"):
		sp, err := ets.ParseSpec(text)
		if err != nil {
			return nil, &inputerr.Error{Option: "Model", Err: err}
		}
		return ets.Fixed{Spec: sp}, nil
	case strings.HasPrefix(lower, "arima"), strings.HasPrefix(lower, "log arima"):
		return resolveARIMA(text, transform.None, false)
	case strings.HasPrefix(lower, "theta"):
		return theta.Family{}, nil
	case strings.HasPrefix(lower, "seasonal naive"):
		return naive.SeasonalNaive{}, nil
	case lower == "random walk with drift":
		return naive.Drift{}, nil
	case lower == "last value":
		return naive.LastValue{}, nil
	case lower == "mean":
		return naive.Mean{}, nil
	case strings.HasPrefix(lower, "croston"):
		return intermittent.SBA{}, nil
	}
	return bad(`write e.g. "ARIMA(0,1,1)(0,1,1) m=12", "ETS(M,Ad,M)", "Theta", "seasonal naive" or a form from the models table`)
}

// cutPrefixFold is strings.CutPrefix ignoring case.
func cutPrefixFold(s, prefix string) (string, bool) {
	if len(s) >= len(prefix) && strings.EqualFold(s[:len(prefix)], prefix) {
		return s[len(prefix):], true
	}
	return s, false
}

// medianFamily fits each member and forecasts their median
// (choose.Median), the combination the automatic choice may pick.
type medianFamily struct{ members []models.Family }

var _ models.Family = medianFamily{}

// Name implements models.Family: the members' names joined by "+", as
// the combination's fits name their family.
func (m medianFamily) Name() string {
	names := make([]string, len(m.members))
	for i, f := range m.members {
		names[i] = f.Name()
	}
	return strings.Join(names, "+")
}

// Fit implements models.Family.
func (m medianFamily) Fit(y []float64, opt models.FitOptions) (models.Model, error) {
	parts := make([]models.Model, len(m.members))
	for i, f := range m.members {
		fit, err := f.Fit(y, opt)
		if err != nil {
			return nil, err
		}
		parts[i] = fit
	}
	return choose.Median(parts...), nil
}
