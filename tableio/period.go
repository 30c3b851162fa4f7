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

// The grains trueup forecasts at. Day to Year are calendar grains, finest
// first; Index is a plain step number with no calendar behind it.
const (
	Day Grain = iota
	Week
	Month
	Quarter
	Year
	Index
)

var grainNames = [...]string{"day", "week", "month", "quarter", "year", "index"}

func (g Grain) String() string { return grainNames[g] }

// adjective is the grain as in "the data is daily".
func (g Grain) adjective() string {
	return [...]string{"daily", "weekly", "monthly", "quarterly", "yearly", "numbered by step"}[g]
}

// ParseGrain reads a grain name: day, week, month, quarter, year or index.
func ParseGrain(s string) (Grain, error) {
	for i, n := range grainNames {
		if s == n {
			return Grain(i), nil
		}
	}
	return 0, inputerr.New("unknown grain %q (use day, week, month, quarter, year or index)", s)
}

// SeasonalPeriod is the usual seasonal period of the grain: 7 days in a
// week, 52 weeks in a year, 12 months, 4 quarters (common practice). Years
// have none (1), and a step index has no calendar to suggest one (1): the
// caller states the seasonal period of such data itself.
func (g Grain) SeasonalPeriod() int {
	return [...]int{7, 52, 12, 4, 1, 1}[g]
}

// TimeKind says how a period column of bare integers (2024, or 17, as
// numbers or as digit text) is read. Calendar labels and dates are not
// affected.
type TimeKind int

const (
	// TimeAuto reads a column of bare integers as years when every value
	// is a four-digit number from 1800 to 2200, and as a step index
	// otherwise.
	TimeAuto TimeKind = iota
	// TimeYears reads bare integers as years.
	TimeYears
	// TimeSteps reads bare integers as a step index (Grain Index).
	TimeSteps
)

// Years the automatic rule takes a bare four-digit integer for.
const (
	minAutoYear = 1800
	maxAutoYear = 2200
)

// Period is one period at a grain. Index counts periods from an epoch:
// days since 1970-01-01, weeks since the ISO week starting Monday
// 1970-01-05 (earlier weeks are negative), months since January 1970,
// quarters since 1970-Q1 and years since 1970. At grain Index it is the
// step number itself. Consecutive periods differ by one in Index.
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
	case Quarter:
		return Period{Quarter, (t.Year()-1970)*4 + (int(t.Month())-1)/3}
	case Year:
		return Period{Year, t.Year() - 1970}
	}
	panic("tableio: FromDate at grain " + g.String() + ", which has no calendar")
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

// HasDate reports whether the period lies on the calendar. A step of an
// integer index (Grain Index) does not; its Start is the zero time.
func (p Period) HasDate() bool { return p.Grain != Index }

// Start is the first calendar day of the period, or the zero time.Time
// for a step index (see HasDate).
func (p Period) Start() time.Time {
	switch p.Grain {
	case Day:
		return epoch.AddDate(0, 0, p.Index)
	case Week:
		return weekEpoch.AddDate(0, 0, 7*p.Index)
	case Month:
		return time.Date(1970+floorDiv(p.Index, 12), time.Month(p.Index-12*floorDiv(p.Index, 12)+1), 1, 0, 0, 0, 0, time.UTC)
	case Quarter:
		y := 1970 + floorDiv(p.Index, 4)
		q := p.Index - 4*floorDiv(p.Index, 4)
		return time.Date(y, time.Month(3*q+1), 1, 0, 0, 0, 0, time.UTC)
	case Year:
		return time.Date(1970+p.Index, 1, 1, 0, 0, 0, 0, time.UTC)
	}
	return time.Time{}
}

// String formats the period: 2024-03-31 (day), 2024-W07 (ISO 8601 week),
// 2024-03 (month), 2024-Q1 (quarter), 2024 (year), or the step number
// itself (index).
func (p Period) String() string {
	if p.Grain == Index {
		return strconv.Itoa(p.Index)
	}
	s := p.Start()
	switch p.Grain {
	case Day:
		return s.Format("2006-01-02")
	case Week:
		y, w := s.ISOWeek()
		return fmt.Sprintf("%04d-W%02d", y, w)
	case Month:
		return s.Format("2006-01")
	case Quarter:
		return fmt.Sprintf("%04d-Q%d", s.Year(), int(s.Month()-1)/3+1)
	}
	return fmt.Sprintf("%04d", s.Year())
}

// Next returns the period k steps later.
func (p Period) Next(k int) Period { return Period{p.Grain, p.Index + k} }

// Coarsen maps p to the period of grain g that contains it. Days coarsen to
// any calendar grain, months to quarters and years, quarters to years; a
// week cannot be placed in one month, quarter or year, and a step index
// has no calendar, so those are input errors.
func (p Period) Coarsen(g Grain) (Period, error) {
	if g == p.Grain {
		return p, nil
	}
	if p.Grain == Index || g == Index {
		return Period{}, inputerr.New("a step index has no calendar: %s periods cannot become %s periods", p.Grain, g)
	}
	if g < p.Grain {
		return Period{}, inputerr.New("the data is %s, finer grain %q is not possible", p.Grain.adjective(), g)
	}
	if p.Grain == Week {
		return Period{}, inputerr.New("weekly periods cannot be grouped into %ss (a week can span two); supply daily data", g)
	}
	return FromDate(p.Start(), g), nil
}

// ParsePeriod reads a period label: 2024-03-31 (a day), 2024-W07 (an ISO
// 8601 week), 2024-03 (a month), 2024-Q1 (a quarter), or a bare integer. A
// day may carry an ISO 8601 time of day and zone after it, as in
// 2024-03-31T23:30:00+01:00 or 2024-03-31 00:00:00Z: the day is the one
// written, in the timestamp's own zone, never moved by converting to UTC.
//
// A bare integer is a year when it is four digits from 1800 to 2200 and a
// step of an integer index (Grain Index) otherwise. The readers apply the
// same rule to a whole column instead (see TimeKind), so that an index
// running from 1 to 3000 is not read as years in the middle.
func ParsePeriod(s string) (Period, error) {
	p, bare, err := parseLabel(s)
	if err == nil && bare && yearLike(strings.TrimSpace(s), p.Index) {
		p = Period{Year, p.Index - 1970}
	}
	return p, err
}

// yearLike reports whether the bare integer n, written as text, passes the
// automatic year rule of TimeAuto.
func yearLike(text string, n int) bool {
	return len(text) == 4 && n >= minAutoYear && n <= maxAutoYear
}

// parseLabel is ParsePeriod without the year rule: a bare integer comes
// back as a step of Grain Index, with bare set, for the caller to decide.
func parseLabel(s string) (p Period, bare bool, err error) {
	s = strings.TrimSpace(s)
	bad := func() (Period, bool, error) {
		return Period{}, false, inputerr.New("cannot read period %q (use 2024-03-31, 2024-W07, 2024-03, 2024-Q1, 2024 or a step number)", s)
	}
	if digits(s) {
		n, err := strconv.Atoi(s)
		if err != nil || n > maxStep {
			return bad()
		}
		return Period{Index, n}, true, nil
	}
	if len(s) < 7 || s[4] != '-' || !digits(s[:4]) {
		return bad()
	}
	year, _ := strconv.Atoi(s[:4])
	rest := s[5:]
	switch {
	case len(rest) >= 5 && rest[2] == '-': // day, maybe with a time after it
		t, err := time.Parse("2006-01-02", s[:10])
		if err != nil || (len(s) > 10 && !timeOfDay(s[10:])) {
			return bad()
		}
		return FromDate(t, Day), false, nil
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
		return FromDate(start, Week), false, nil
	case rest[0] == 'Q' || rest[0] == 'q':
		if len(rest) != 2 || rest[1] < '1' || rest[1] > '4' {
			return bad()
		}
		return Period{Quarter, (year-1970)*4 + int(rest[1]-'1')}, false, nil
	default:
		if len(rest) != 2 || !digits(rest) {
			return bad()
		}
		mo, _ := strconv.Atoi(rest)
		if mo < 1 || mo > 12 {
			return bad()
		}
		return Period{Month, (year-1970)*12 + mo - 1}, false, nil
	}
}

// maxStep bounds step numbers so that a period index stays far from
// integer overflow when offsets are added to it.
const maxStep = 1 << 40

// timeOfDay reports whether s, the text after a date, is an ISO 8601 time
// of day: a 'T' or a blank, hh:mm, optionally :ss and a fraction, then
// optionally a zone (Z, ±hh, ±hhmm or ±hh:mm).
func timeOfDay(s string) bool {
	if len(s) < 6 || (s[0] != 'T' && s[0] != 't' && s[0] != ' ') {
		return false
	}
	two := func(s string, max int) bool {
		return len(s) >= 2 && digits(s[:2]) && int(s[0]-'0')*10+int(s[1]-'0') <= max
	}
	s = s[1:]
	if !two(s, 23) || s[2] != ':' || !two(s[3:], 59) {
		return false
	}
	s = s[5:]
	if len(s) >= 3 && s[0] == ':' {
		if !two(s[1:], 60) { // 60: a leap second
			return false
		}
		s = s[3:]
		if len(s) >= 2 && (s[0] == '.' || s[0] == ',') && s[1] >= '0' && s[1] <= '9' {
			s = s[1:]
			for len(s) > 0 && s[0] >= '0' && s[0] <= '9' {
				s = s[1:]
			}
		}
	}
	switch {
	case s == "" || s == "Z" || s == "z":
		return true
	case s[0] == '+' || s[0] == '-':
		z := s[1:]
		switch len(z) {
		case 2:
			return two(z, 23)
		case 4:
			return two(z, 23) && two(z[2:], 59)
		case 5:
			return two(z, 23) && z[2] == ':' && two(z[3:], 59)
		}
	}
	return false
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

// ColumnPeriods reads a period column of a table read by ReadTable as Read
// reads the period column of a sales table (the same timeDecoder): text
// labels, dates and timestamps (as text, or as Date), and integers (years
// or steps, by kind). Dates come back as days (Grain Day); the caller
// puts them at its grain (Period.Coarsen). The notes say how the periods
// were read where that is not plain (none yet). An empty cell, a fraction
// or a label that is not a period is an input error naming the data row.
func ColumnPeriods(c Column, kind TimeKind) ([]Period, []string, error) {
	var td timeDecoder
	n := len(c.Strings) + len(c.Floats) + len(c.Ints)
	td.periods = make([]Period, 0, n)
	for r := 0; r < n; r++ {
		if c.Null != nil && c.Null[r] {
			return nil, nil, &inputerr.Error{Row: r + 1, Column: c.Name, Msg: "empty period"}
		}
		var p Period
		var err error
		switch c.Type {
		case String:
			p, err = td.parse(c.Strings[r])
		case Date:
			p = Period{Day, int(c.Ints[r])}
			err = td.checkGrain(p)
		case Int64:
			p, err = td.integer(c.Ints[r])
		default:
			v := c.Floats[r]
			if v != float64(int64(v)) {
				err = inputerr.New("period %g is not a whole number", v)
			} else {
				p, err = td.integer(int64(v))
			}
		}
		if err != nil {
			return nil, nil, &inputerr.Error{Row: r + 1, Column: c.Name, Err: err}
		}
		td.periods = append(td.periods, p)
	}
	td.finish(kind)
	return td.periods, nil, nil
}
