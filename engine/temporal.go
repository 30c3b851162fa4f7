package engine

import (
	"context"
	"math"

	"trueup/reconcile"
)

// fitTemporal fits every node again on its history summed over blocks of
// each of reconcile.TemporalFactors(period) periods (a quarter and a
// year of months), the blocks ending at the forecast origin, with the
// run's model choice, the season of the summed series (4 quarters, 1
// year) and enough blocks ahead to cover the horizon. It returns their
// forecasts for a temporal reconciliation (reconcile.Temporal).
func fitTemporal(ctx context.Context, opt Options, history [][]float64) ([]reconcile.TemporalBase, error) {
	var out []reconcile.TemporalBase
	for _, k := range reconcile.TemporalFactors(opt.Period) {
		jobs := make([]FitJob, len(history))
		for i, y := range history {
			jobs[i] = FitJob{Node: i, Series: blockSums(y, k), Model: opt.Model,
				Period: opt.Period / k, Horizon: (opt.Horizon + k - 1) / k}
		}
		fits, err := opt.Fitter.Fit(ctx, jobs, nil)
		if err != nil {
			return nil, err
		}
		tb := reconcile.TemporalBase{Every: k, Base: make([][]float64, len(fits))}
		for i, f := range fits {
			tb.Base[i] = f.Mean
		}
		out = append(out, tb)
	}
	return out, nil
}

// blockSums sums y over consecutive blocks of k periods ending with its
// last period (the first len(y) mod k periods are left out); a block
// with a missing period is missing (NaN), so a node's summed series
// starts with its first whole block.
func blockSums(y []float64, k int) []float64 {
	n := len(y) / k
	out := make([]float64, n)
	off := len(y) - n*k
	for b := range out {
		for _, v := range y[off+b*k : off+(b+1)*k] {
			out[b] += v
		}
		if math.IsNaN(out[b]) {
			out[b] = math.NaN()
		}
	}
	return out
}
