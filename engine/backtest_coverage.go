package engine

import (
	"math/rand/v2"
	"slices"
	"sort"

	"trueup/accuracy"
)

// coverageResamples is the number of resamples behind CoverageRange.
const coverageResamples = 2000

// CoverageRange returns the share of actuals inside method's interval of
// the given level (percent, as in Levels) at one level of the structure,
// over every scored node, origin and step, with a range for its sampling
// error: the 5th and 95th percentile of the share when the target
// periods are resampled with replacement, each period carrying every
// origin, step and node that forecast it (a cluster bootstrap by period;
// Cameron & Miller 2015, "A practitioner's guide to cluster-robust
// inference", J. Human Resources 50:317–372, cited from memory). The
// origins overlap and a level's nodes share shocks, so the forecasts of
// one period are not independent; periods are treated as independent of
// each other, so the range is a lower bound on the sampling error when
// errors persist from period to period. The resamples are seeded: the
// same backtest gives the same range. ok is false when nothing at the
// level was scored.
func (res *BacktestResult) CoverageRange(method, level string, interval float64) (share, lo, hi float64, ok bool) {
	type cell struct{ in, n float64 }
	cells := map[int]*cell{}
	for _, o := range res.Origins {
		r := o.Results[method]
		if r == nil {
			continue
		}
		st := o.Structure
		for i, node := range st.Nodes {
			if !o.Scored(i) || st.Levels[node.Level].Name != level {
				continue
			}
			for k := 0; k < res.Horizon; k++ {
				t := o.Periods + k // the target period's index in the history
				c := cells[t]
				if c == nil {
					c = &cell{}
					cells[t] = c
				}
				b0, b1 := r.Bounds(i, k, interval)
				c.n++
				if accuracy.Covered(b0, b1, o.Actual[i][k]) {
					c.in++
				}
			}
		}
	}
	if len(cells) == 0 {
		return 0, 0, 0, false
	}
	periods := make([]int, 0, len(cells))
	for t := range cells {
		periods = append(periods, t)
	}
	sort.Ints(periods) // a fixed order, so that the resamples repeat
	list := make([]*cell, len(periods))
	var in, n float64
	for q, t := range periods {
		list[q] = cells[t]
		in += list[q].in
		n += list[q].n
	}
	rng := rand.New(rand.NewPCG(uint64(len(list)), uint64(n)))
	shares := make([]float64, coverageResamples)
	for b := range shares {
		var bi, bn float64
		for range list {
			c := list[rng.IntN(len(list))]
			bi += c.in
			bn += c.n
		}
		shares[b] = bi / bn
	}
	slices.Sort(shares)
	return in / n, shares[coverageResamples/20], shares[coverageResamples-1-coverageResamples/20], true
}
