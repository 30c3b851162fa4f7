package report

import (
	"fmt"
	"math"
	"strings"

	"trueup/tableio"
)

// Plans are the plan totals of every node (the plans table, written with
// --plan-grain), carried in the page's JSON rather than as float32
// series: a year's total of a large chain has more digits than float32
// keeps, and finance reads them to the unit.
type Plans struct {
	Periods []string `json:"periods"` // plan period labels, in table order
	// PeriodsActual and PeriodsForecast count the data periods of each
	// plan period that are actuals and forecasts.
	PeriodsActual   []int `json:"periods_actual"`
	PeriodsForecast []int `json:"periods_forecast"`
	// Intervals are the interval labels of the bounds, e.g. "80".
	Intervals []string   `json:"intervals"`
	Nodes     []PlanNode `json:"nodes"` // in the order of Meta.Nodes
}

// PlanNode holds one node's plan totals per plan period: the actual and
// forecast parts and, per interval, the total's bounds; values rounded
// to hundredths, nil where missing.
type PlanNode struct {
	Actual   []*float64   `json:"a"`
	Forecast []*float64   `json:"f"`
	Lower    [][]*float64 `json:"lo"`
	Upper    [][]*float64 `json:"hi"`
}

// addPlans reads the plans table into m.Plans.
func addPlans(m *Meta, t *tableio.Table, attrs []string, idx nodeIndex) error {
	rows, err := nodeRows(t, "plans", attrs, idx)
	if err != nil {
		return err
	}
	labels, at, err := periodsIn(t, "plans")
	if err != nil {
		return err
	}
	need := func(name string) (*tableio.Column, error) {
		if c := column(t, name); c != nil {
			return c, nil
		}
		return nil, fmt.Errorf("the plans table has no %s column", name)
	}
	var cols [4]*tableio.Column
	for j, name := range []string{"actual", "forecast", "periods_actual", "periods_forecast"} {
		if cols[j], err = need(name); err != nil {
			return err
		}
	}
	p := &Plans{Periods: labels, PeriodsActual: make([]int, len(labels)), PeriodsForecast: make([]int, len(labels)),
		Intervals: []string{}, Nodes: make([]PlanNode, len(m.Nodes))}
	var lower, upper []*tableio.Column
	for _, c := range t.Columns {
		label, ok := strings.CutPrefix(c.Name, "pi")
		if label, ok = strings.CutSuffix(label, "_lower"); ok && column(t, "pi"+label+"_upper") != nil {
			p.Intervals = append(p.Intervals, label)
			lower, upper = append(lower, column(t, c.Name)), append(upper, column(t, "pi"+label+"_upper"))
		}
	}
	empty := func() []*float64 { return make([]*float64, len(labels)) }
	for i := range p.Nodes {
		nd := &p.Nodes[i]
		nd.Actual, nd.Forecast = empty(), empty()
		for range p.Intervals {
			nd.Lower, nd.Upper = append(nd.Lower, empty()), append(nd.Upper, empty())
		}
	}
	for r, i := range rows {
		k := at[r]
		p.PeriodsActual[k], p.PeriodsForecast[k] = int(number(cols[2], r)), int(number(cols[3], r))
		nd := &p.Nodes[i]
		nd.Actual[k], nd.Forecast[k] = cents(number(cols[0], r)), cents(number(cols[1], r))
		for l := range p.Intervals {
			nd.Lower[l][k], nd.Upper[l][k] = cents(number(lower[l], r)), cents(number(upper[l], r))
		}
	}
	m.Plans = p
	return nil
}

// cents rounds to hundredths, nil for a missing value.
func cents(v float64) *float64 { return finitePtr(math.Round(v*100) / 100) }
