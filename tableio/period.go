package tableio

import (
	"fmt"
	"strconv"
	"strings"
	"time"

	"trueup/inputerr"
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

// adjective is the grain as in "the data is daily".
func (g Grain) adjective() string {
	return [...]string{"daily", "weekly", "monthly", "quarterly"}[g]
}

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
		return Period{Day, daysSinceEpoch(t)}
	case Week:
		return Period{Week, floorDiv(daysSinceEpoch(t)-4, 7)} // 1970-01-05 is day 4
	case Month:
		return Period{Month, (t.Year()-1970)*12 + int(t.Month()) - 1}
	default:
		return Period{Quarter, (t.Year()-1970)*4 + (int(t.Month())-1)/3}
	}
}

// daysSinceEpoch counts days from 1970-01-01 to the midnight-UTC date t.
// It uses Unix seconds rather than time.Duration, which overflows for dates
// more than 292 years from 1970.
func daysSinceEpoch(t time.Time) int { return floorDiv(int(t.Unix()), 86400) }

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
		return Period{}, inputerr.New("the data is %s, finer grain %q is not possible", p.Grain.adjective(), g)
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
	bad := func() (Period, error) {
		return Period{}, inputerr.New("cannot read period %q (use 2024-03-31, 2024-W07, 2024-03 or 2024-Q1)", s)
	}
	if len(s) < 7 || s[4] != '-' || !digits(s[:4]) {
		return bad()
	}
	year, _ := strconv.Atoi(s[:4])
	rest := s[5:]
	switch {
	case len(rest) >= 5 && rest[2] == '-': // day, maybe with a time after it
		t, err := time.Parse("2006-01-02", s[:10])
		if err != nil || (len(s) > 10 && s[10] != 'T' && s[10] != ' ') {
			return bad()
		}
		return FromDate(t, Day), nil
	case rest[0] == 'W' || rest[0] == 'w':
		if len(rest) > 3 || !digits(rest[1:]) {
			return bad()
		}
		w, _ := strconv.Atoi(rest[1:])
		if w < 1 || w > 53 {
			return bad()
		}
		// ISO 8601: week 1 is the week (Monday to Sunday) holding 4 January.
		jan4 := time.Date(year, 1, 4, 0, 0, 0, 0, time.UTC)
		monday := jan4.AddDate(0, 0, -((int(jan4.Weekday()) + 6) % 7))
		start := monday.AddDate(0, 0, 7*(w-1))
		if y, _ := start.ISOWeek(); y != year {
			return bad() // week 53 of a 52-week year
		}
		return FromDate(start, Week), nil
	case rest[0] == 'Q' || rest[0] == 'q':
		if len(rest) != 2 || rest[1] < '1' || rest[1] > '4' {
			return bad()
		}
		return Period{Quarter, (year-1970)*4 + int(rest[1]-'1')}, nil
	default:
		if len(rest) != 2 || !digits(rest) {
			return bad()
		}
		mo, _ := strconv.Atoi(rest)
		if mo < 1 || mo > 12 {
			return bad()
		}
		return Period{Month, (year-1970)*12 + mo - 1}, nil
	}
}

// digits reports whether s is a non-empty run of ASCII digits.
func digits(s string) bool {
	for i := 0; i < len(s); i++ {
		if s[i] < '0' || s[i] > '9' {
			return false
		}
	}
	return s != ""
}
