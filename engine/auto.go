package engine

import (
	"context"
	"time"

	"trueup/inputerr"
)

// AutoMethod is the Reconciliation.Method that chooses the method by a
// short backtest (see chooseMethod).
const AutoMethod = "auto"

// AutoChoice records how Reconciliation{Method: AutoMethod} chose: the
// winner of a short backtest and why, with every method's headline.
type AutoChoice struct {
	Method   string          `json:"method"`
	Origins  int             `json:"origins"`
	Reason   string          `json:"reason"`
	Headline []Headline      `json:"headline"`
	Skipped  []SkippedMethod `json:"skipped"`
}

// chooseMethod runs a backtest of the default compared methods at
// rc.Origins origins (0: AutoOrigins) and returns the settings of the
// recommended one, with the record of the choice. The backtest fits
// every node at each origin, so a forecast with the automatic method
// costs about Origins + 1 forecasts.
func chooseMethod(ctx context.Context, d *Data, opt Options) (Reconciliation, *AutoChoice, error) {
	rc := opt.Reconcile
	if rc.Cov != "" || rc.At != "" {
		return rc, nil, inputerr.ForOption("Method", "the automatic choice picks the covariance and level itself; name a method to set them")
	}
	if rc.Locks != "" {
		return rc, nil, inputerr.ForOption("Locks", "the automatic choice may pick a method that cannot keep locked forecasts; name the method (%s) to lock forecasts", lockMethods())
	}
	k := rc.Origins
	if k == 0 {
		k = AutoOrigins
	}
	bo := opt
	bo.Progress, bo.PlanGrains = nil, nil // the choice scores months
	bt, err := Backtest(ctx, d, BacktestOptions{Options: bo, Origins: k})
	if err != nil {
		return rc, nil, err
	}
	rec := bt.Recommendation
	chosen, err := compareSetting(rec.Method)
	if err != nil {
		return rc, nil, err
	}
	chosen.Nonnegative, chosen.Paths, chosen.Calibrate = rc.Nonnegative, rc.Paths, rc.Calibrate
	return chosen, &AutoChoice{Method: rec.Method, Origins: k, Reason: rec.Reason, Headline: bt.Headline, Skipped: bt.Skipped}, nil
}

// forecastAuto is Forecast with the method chosen by a short backtest.
func forecastAuto(ctx context.Context, d *Data, opt Options) (*Result, error) {
	start := time.Now()
	if d.Structure == nil {
		return nil, inputerr.ForOption("Chains", "a forecast run needs key columns to build the structure from")
	}
	rc, choice, err := chooseMethod(ctx, d, opt)
	if err != nil {
		return nil, err
	}
	seconds := time.Since(start).Seconds()
	opt.Reconcile = rc
	res, err := Forecast(ctx, d, opt)
	if err != nil {
		return nil, err
	}
	res.Report.Reconcile.Auto = choice
	res.Report.Options["method"] = AutoMethod
	res.Report.Options["chosen_method"] = choice.Method
	res.Report.Timings["choose_method"] = seconds
	return res, nil
}
