package tableio

import "trueup/inputerr"

// BelongsTo returns the period of the coarser calendar grain g that p is
// counted in when totals are made by g (plan totals by quarter or year).
// Days, months and quarters lie inside one period of every coarser grain
// (Coarsen). A week can straddle two months, so it is counted whole in
// the month, quarter and year that hold its Thursday: the rule by which
// ISO 8601 gives a week to the year holding its Thursday (2026-W01, 29
// December 2025 to 4 January 2026, belongs to January 2026), applied to
// months and quarters too. A month then holds four or five weeks, a
// quarter 13 or 14, a year 52 or 53, and every week lies in exactly one.
// A step index has no calendar; g must be coarser than p's grain.
func (p Period) BelongsTo(g Grain) (Period, error) {
	if p.Grain == Week && g > Week && g != Index {
		return FromDate(p.Start().AddDate(0, 0, 3), g), nil // Monday + 3 days
	}
	if g <= p.Grain && p.Grain != Index && g != Index {
		return Period{}, inputerr.New("the data is %s: totals by %s need a coarser grain", p.Grain.adjective(), g)
	}
	return p.Coarsen(g)
}
