package reconcile

import (
	"strings"

	"trueup/inputerr"
)

// Param is what a reconciliation method is configured by besides its name.
type Param int

// The parameters a method can take.
const (
	// NoParam: the name says everything.
	NoParam Param = iota
	// CovParam: a covariance estimator (CovNames), shrink when not given.
	CovParam
	// LevelParam: a level of the structure, required.
	LevelParam
)

// MethodInfo describes one reconciliation method. Every place that names,
// lists or explains methods (the CLI's flags and their validation, the
// backtest's compared methods, run.json and the report) reads this table,
// so a method is spelled one way everywhere.
type MethodInfo struct {
	// Name is the name ByName selects the method by; Method.Name returns
	// it and run.json records it.
	Name string
	// Param is what the method is configured by.
	Param Param
	// Help is a short phrase for flag help.
	Help string
	// Explanation is a sentence for the people who read the forecasts:
	// what the method does to make totals equal the sum of their parts.
	Explanation string
	// NonNegativeDefault says whether non-negative reconciliation is on by
	// default (when the history has no negative value: sales cannot be
	// negative). The methods that support Problem.Nonnegative have it; the
	// others refuse Problem.Nonnegative (nonNegativeOnly).
	NonNegativeDefault bool
	// Temporal says whether the method needs Problem.Temporal: base
	// forecasts of the series summed over quarters and whole seasons,
	// which the caller fits beside the single-period ones.
	Temporal bool
	// Locks says whether the method reconciles around locked forecasts
	// (Problem.Locks); the others refuse them (lockOnly).
	Locks bool
	// FixedWeights says whether the reconciled forecasts are S·G·ŷ with G
	// set by the history alone, not by the base forecasts ŷ: reconciling
	// the base errors then gives the reconciled errors' part that comes
	// from them (the engine's interval shape). The methods that split by
	// forecast proportions, and the temporal method, whose G needs the
	// coarser bases, have not.
	FixedWeights bool

	build func(cov Covariance, at string) Method
}

// methods is the table, in the order help text lists the methods. The
// sources of each method are cited on its type.
var methods = []MethodInfo{
	{Name: "bottom-up", FixedWeights: true, Help: "add up the finest level's forecasts",
		Explanation: "the forecasts of the finest level are added up, so every total is the sum of its parts",
		build:       func(Covariance, string) Method { return BottomUp{} }},
	{Name: "top-down-hist", FixedWeights: true, Help: "split the total by historical shares (needs the history)",
		Explanation: "the total's forecast is split down by each node's share of the history",
		build:       func(Covariance, string) Method { return TopDown{Proportions: HistoricalProportions} }},
	{Name: "top-down-avg", FixedWeights: true, Help: "split the total by shares of the historical averages (needs the history)",
		Explanation: "the total's forecast is split down by each node's average share of the history",
		build:       func(Covariance, string) Method { return TopDown{Proportions: ProportionsOfAverages} }},
	{Name: "top-down-fcst", Help: "split the total by forecast proportions (one chain only)",
		Explanation: "the total's forecast is split down by each node's share of the forecasts",
		build:       func(Covariance, string) Method { return TopDown{Proportions: ForecastProportions} }},
	{Name: "middle-out", Param: LevelParam, Help: "keep one level's forecasts, add up above, split below",
		Explanation: "one level's forecasts are added up above it and split down below it",
		build:       func(_ Covariance, at string) Method { return MiddleOut{Level: at} }},
	{Name: "mint", Param: CovParam, NonNegativeDefault: true, Locks: true, FixedWeights: true, Help: "combine every level's forecasts, weighted by how reliable their errors have been (MinT)",
		Explanation: "MinT combines every level's forecast, weighting each by how reliable its errors have been, so that totals equal the sum of their parts",
		build:       func(cov Covariance, _ string) Method { return Projection{Cov: cov} }},
	{Name: "temporal", NonNegativeDefault: true, Temporal: true, Help: "also forecast each node by quarter and by year, combine across time (temporal hierarchy), then MinT",
		Explanation: "each node is also forecast by quarter and by year; those forecasts are combined with the monthly ones so that months add up to quarters and years, and MinT then makes totals equal the sum of their parts",
		build:       func(Covariance, string) Method { return Temporal{} }},
}

// Methods returns the table of reconciliation methods, in the order help
// text lists them. The caller may modify the returned slice.
func Methods() []MethodInfo { return append([]MethodInfo(nil), methods...) }

// LookupMethod returns the description of the method named name.
func LookupMethod(name string) (MethodInfo, bool) {
	for _, m := range methods {
		if m.Name == name {
			return m, true
		}
	}
	return MethodInfo{}, false
}

// MethodNames lists the names of the table, in order.
func MethodNames() []string {
	out := make([]string, len(methods))
	for i, m := range methods {
		out[i] = m.Name
	}
	return out
}

// Label is the one spelling of a configured method, as the backtest
// compares and lists it: the name, then "-" and the covariance for a
// method configured by one ("mint-shrink"; shrink when cov is empty), or
// "@" and the level for a method configured by a level
// ("middle-out@region+category").
func Label(name, cov, at string) string {
	info, ok := LookupMethod(name)
	switch {
	case ok && info.Param == CovParam:
		if cov == "" {
			cov = string(CovShrink)
		}
		return name + "-" + cov
	case ok && info.Param == LevelParam:
		return name + "@" + at
	}
	return name
}

// ParseLabel splits a label (see Label) into the method's name, covariance
// and level; a bare name is accepted too (a method configured by a
// covariance then takes shrink, one configured by a level still needs
// it). ok is false when the label names no method of the table.
func ParseLabel(label string) (name, cov, at string, ok bool) {
	if _, found := LookupMethod(label); found {
		return label, "", "", true
	}
	for _, m := range methods {
		switch {
		case m.Param == CovParam && strings.HasPrefix(label, m.Name+"-"):
			return m.Name, strings.TrimPrefix(label, m.Name+"-"), "", true
		case m.Param == LevelParam && strings.HasPrefix(label, m.Name+"@"):
			return m.Name, "", strings.TrimPrefix(label, m.Name+"@"), true
		}
	}
	return "", "", "", false
}

// ByName returns the method named method, with covariance estimator cov
// and level at. cov applies to a method configured by a covariance (empty
// means shrink) and at to one configured by a level (where it is
// required); giving either with another method is an error. method may
// also be a label that carries them ("mint-variance",
// "middle-out@region"), the spelling the backtest uses; cov and at must
// then be empty.
func ByName(method, cov, at string) (Method, error) {
	name, lcov, lat, ok := ParseLabel(method)
	if !ok {
		return nil, inputerr.ForOption("Method", "unknown reconciliation method %q (use %s)", method, strings.Join(MethodNames(), ", "))
	}
	if name != method {
		if cov != "" || at != "" {
			return nil, inputerr.ForOption("Method", "method %q already names its covariance or level; do not give them again", method)
		}
		cov, at = lcov, lat
	}
	info, _ := LookupMethod(name)
	if at != "" && info.Param != LevelParam {
		return nil, inputerr.ForOption("At", "a level to reconcile from (%q) applies to %s only", at, namesWith(LevelParam))
	}
	if cov != "" && info.Param != CovParam {
		return nil, inputerr.ForOption("Cov", "a covariance estimator (%q) applies to %s only", cov, namesWith(CovParam))
	}
	switch info.Param {
	case LevelParam:
		if at == "" {
			return nil, inputerr.ForOption("At", "the %s method needs the level to reconcile from (a level name such as region+category)", name)
		}
	case CovParam:
		if cov == "" {
			cov = string(CovShrink)
		}
		if !Covariance(cov).valid() {
			return nil, inputerr.ForOption("Cov", "unknown covariance estimator %q (use %s)", cov, strings.Join(CovNames(), ", "))
		}
	}
	return info.build(Covariance(cov), at), nil
}

// namesWith names the methods configured by p, such as "the mint method".
func namesWith(p Param) string {
	return listNames(func(m MethodInfo) bool { return m.Param == p })
}

// nonNegativeOnly names the methods that support non-negative
// reconciliation, for the message of those that refuse it.
func nonNegativeOnly() string {
	return listNames(func(m MethodInfo) bool { return m.NonNegativeDefault })
}

// refuseLocks is the error of a method that does not take locks.
func refuseLocks(p *Problem, method string) error {
	if len(p.Locks) == 0 {
		return nil
	}
	return inputerr.ForOption("Locks", "locked forecasts apply to %s only (%s has no weights to move the other nodes by)",
		listNames(func(m MethodInfo) bool { return m.Locks }), method)
}

func listNames(keep func(MethodInfo) bool) string {
	var names []string
	for _, m := range methods {
		if keep(m) {
			names = append(names, m.Name)
		}
	}
	if len(names) == 1 {
		return "the " + names[0] + " method"
	}
	return "the methods " + strings.Join(names, ", ")
}
