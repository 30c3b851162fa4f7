package tableio

import (
	"fmt"
	"strconv"
	"strings"
	"time"

	"trueup/internal/inputerr"
)

// Grain is the length of one period.
type Grain int

// The grains trueup forecasts at, finest first.
const (
	Day Grain = iota
	Week
	Month
	Quarter
)

var grainNames = [...]string{"day", "week", "month", "quarter"}

func (g Grain) String() string { return grainNames[g] }

// ParseGrain reads --grain.
func ParseGrain(s string) (Grain, error) {
	for i, n := range grainNames {
		if s == n {
			return Grain(i), nil
		}
	}
	return 0, inputerr.New("unknown grain %q (use day, week, month or quarter)", s)
}

// SeasonalPeriod is the usual seasonal period of the grain: 7 days in a
// week, 52 weeks in a year, 12 months, 4 quarters (common practice).
func (g Grain) SeasonalPeriod() int {
	return [...]int{7, 52, 12, 4}[g]
}

// Period is one period at a grain. Index counts periods from an epoch:
// days since 1970-01-01, weeks since the ISO week starting Monday
// 1970-01-05 (earlier weeks are negative), months since January 1970 and
// quarters since 1970-Q1. Consecutive periods differ by one in Index.
type Period struct {
	Grain Grain
	Index int
}

var (
	epoch     = time.Date(1970, 1, 1, 0, 0, 0, 0, time.UTC)
	weekEpoch = time.Date(1970, 1, 5, 0, 0, 0, 0, time.UTC) // a Monday
)

// FromDate returns the period of grain g that contains the calendar date.
func FromDate(t time.Time, g Grain) Period {
	t = time.Date(t.Year(), t.Month(), t.Day(), 0, 0, 0, 0, time.UTC)
	switch g {
	case Day:
		return Period{Day, int(t.Sub(epoch).Hours() / 24)}
	case Week:
		d := int(t.Sub(weekEpoch).Hours() / 24)
		return Period{Week, floorDiv(d, 7)}
	case Month:
		return Period{Month, (t.Year()-1970)*12 + int(t.Month()) - 1}
	default:
		return Period{Quarter, (t.Year()-1970)*4 + (int(t.Month())-1)/3}
	}
}

func floorDiv(a, b int) int {
	q := a / b
	if (a%b != 0) && ((a < 0) != (b < 0)) {
		q--
	}
	return q
}

// Start is the first calendar day of the period.
func (p Period) Start() time.Time {
	switch p.Grain {
	case Day:
		return epoch.AddDate(0, 0, p.Index)
	case Week:
		return weekEpoch.AddDate(0, 0, 7*p.Index)
	case Month:
		return time.Date(1970+floorDiv(p.Index, 12), time.Month(p.Index-12*floorDiv(p.Index, 12)+1), 1, 0, 0, 0, 0, time.UTC)
	default:
		y := 1970 + floorDiv(p.Index, 4)
		q := p.Index - 4*floorDiv(p.Index, 4)
		return time.Date(y, time.Month(3*q+1), 1, 0, 0, 0, 0, time.UTC)
	}
}

// String formats the period: 2024-03-31 (day), 2024-W07 (ISO 8601 week),
// 2024-03 (month), 2024-Q1 (quarter).
func (p Period) String() string {
	s := p.Start()
	switch p.Grain {
	case Day:
		return s.Format("2006-01-02")
	case Week:
		y, w := s.ISOWeek()
		return fmt.Sprintf("%04d-W%02d", y, w)
	case Month:
		return s.Format("2006-01")
	default:
		return fmt.Sprintf("%04d-Q%d", s.Year(), int(s.Month()-1)/3+1)
	}
}

// Next returns the period k steps later.
func (p Period) Next(k int) Period { return Period{p.Grain, p.Index + k} }

// Coarsen maps p to the period of grain g that contains it. Days coarsen to
// any grain and months to quarters; a week cannot be placed in one month or
// quarter, so that is an input error.
func (p Period) Coarsen(g Grain) (Period, error) {
	if g == p.Grain {
		return p, nil
	}
	if g < p.Grain {
		return Period{}, inputerr.New("the data is %sly, finer grain %q is not possible", p.Grain, g)
	}
	if p.Grain == Week {
		return Period{}, inputerr.New("weekly periods cannot be grouped into %ss (a week can span two); supply daily data", g)
	}
	return FromDate(p.Start(), g), nil
}

// ParsePeriod reads a period label: 2024-03-31 (a day; a time of day after
// it, as in 2024-03-31T00:00:00Z, is ignored), 2024-W07, 2024-03 or 2024-Q1.
func ParsePeriod(s string) (Period, error) {
	s = strings.TrimSpace(s)
	bad := inputerr.New("cannot read period %q (use 2024-03-31, 2024-W07, 2024-03 or 2024-Q1)", s)
	if len(s) < 7 || s[4] != '-' {
		return Period{}, bad
	}
	year, err := strconv.Atoi(s[:4])
	if err != nil {
		return Period{}, bad
	}
	rest := s[5:]
	switch {
	case len(rest) >= 5 && rest[2] == '-': // day, maybe with a time after it
		day := s[:10]
		t, err := time.Parse("2006-01-02", day)
		if err != nil || (len(s) > 10 && s[10] != 'T' && s[10] != ' ') {
			return Period{}, bad
		}
		return FromDate(t, Day), nil
	case rest[0] == 'W' || rest[0] == 'w':
		w, err := strconv.Atoi(rest[1:])
		if err != nil || w < 1 || w > 53 {
			return Period{}, bad
		}
		jan4 := time.Date(year, 1, 4, 0, 0, 0, 0, time.UTC)
		monday := jan4.AddDate(0, 0, -((int(jan4.Weekday())+6)%7))
		start := monday.AddDate(0, 0, 7*(w-1))
		if y, _ := start.ISOWeek(); y != year {
			return Period{}, bad // week 53 of a 52-week year
		}
		return FromDate(start, Week), nil
	case rest[0] == 'Q' || rest[0] == 'q':
		q, err := strconv.Atoi(rest[1:])
		if err != nil || q < 1 || q > 4 || len(rest) != 2 {
			return Period{}, bad
		}
		return Period{Quarter, (year-1970)*4 + q - 1}, nil
	default:
		mo, err := strconv.Atoi(rest)
		if err != nil || mo < 1 || mo > 12 || len(rest) != 2 {
			return Period{}, bad
		}
		return Period{Month, (year-1970)*12 + mo - 1}, nil
	}
}
