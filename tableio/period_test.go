package tableio

import (
	"fmt"
	"strings"
	"testing"
	"time"

	"trueup/inputerr"
)

func date(y int, m time.Month, d int) time.Time { return time.Date(y, m, d, 0, 0, 0, 0, time.UTC) }

func mustParse(t *testing.T, s string) Period {
	t.Helper()
	p, err := ParsePeriod(s)
	if err != nil {
		t.Fatalf("ParsePeriod(%q): %v", s, err)
	}
	return p
}

func TestParsePeriodForms(t *testing.T) {
	cases := []struct {
		in    string
		grain Grain
		start time.Time
		label string
	}{
		{"2024-03-31", Day, date(2024, 3, 31), "2024-03-31"},
		{"2024-03-31T00:00:00Z", Day, date(2024, 3, 31), "2024-03-31"},
		{"2024-03-31 23:59:59", Day, date(2024, 3, 31), "2024-03-31"},
		{" 2024-02-29 ", Day, date(2024, 2, 29), "2024-02-29"},
		{"1970-01-01", Day, date(1970, 1, 1), "1970-01-01"},
		{"1969-12-31", Day, date(1969, 12, 31), "1969-12-31"},
		{"2024-W07", Week, date(2024, 2, 12), "2024-W07"},
		{"2024-w7", Week, date(2024, 2, 12), "2024-W07"},
		{"2024-03", Month, date(2024, 3, 1), "2024-03"},
		{"1969-12", Month, date(1969, 12, 1), "1969-12"},
		{"2024-Q1", Quarter, date(2024, 1, 1), "2024-Q1"},
		{"2024-q4", Quarter, date(2024, 10, 1), "2024-Q4"},
		{"1969-Q4", Quarter, date(1969, 10, 1), "1969-Q4"},
	}
	for _, c := range cases {
		p := mustParse(t, c.in)
		if p.Grain != c.grain || !p.Start().Equal(c.start) || p.String() != c.label {
			t.Errorf("ParsePeriod(%q) = %v %s starting %s; want %v %s starting %s",
				c.in, p.Grain, p, p.Start().Format("2006-01-02"), c.grain, c.label, c.start.Format("2006-01-02"))
		}
		if again := mustParse(t, p.String()); again != p {
			t.Errorf("label %q of %q reads back as %v, want %v", p.String(), c.in, again, p)
		}
	}
}

func TestParsePeriodRejects(t *testing.T) {
	for _, s := range []string{
		"", "-3", "2024.0", "2024-3", "24-03-01", "2024/03/31", "2024-13", "2024-00", "2024-02-30",
		"2024-03-31x", "2024-03-31T25:00", "2024-03-31T10", "2024-03-31 10:00+1:00", "2024-03-31T10:00:00 CET",
		"2024-W00", "2024-W54", "2021-W53", "2024-W+7", "2024-W007",
		"2024-Q0", "2024-Q5", "2024-Q12", "+202-03", "2024-+3", "abcd-01", "March 2024",
	} {
		_, err := ParsePeriod(s)
		if err == nil {
			t.Errorf("ParsePeriod(%q) succeeded, want an error", s)
			continue
		}
		if !inputerr.Is(err) || !strings.Contains(err.Error(), "cannot read period") {
			t.Errorf("ParsePeriod(%q) error %v, want an input error saying it cannot read the period", s, err)
		}
	}
}

// ISO 8601 week dates: week 1 is the week holding the year's first
// Thursday, weeks run Monday to Sunday. The dates below are facts of that
// calendar rule; the 2008/2009/2010 examples are the ones usually given
// for it (recalled from memory), and every one agrees with Go's
// time.ISOWeek (standard library, Go 1.26), which this test also asks.
func TestISOWeekEdges(t *testing.T) {
	cases := []struct {
		day   time.Time
		label string
	}{
		{date(2020, 12, 31), "2020-W53"}, // Thursday
		{date(2021, 1, 3), "2020-W53"},   // Sunday after it
		{date(2021, 1, 4), "2021-W01"},   // Monday
		{date(2024, 12, 30), "2025-W01"}, // Monday in the last days of December
		{date(2008, 12, 29), "2009-W01"},
		{date(2010, 1, 3), "2009-W53"},
		{date(2026, 12, 31), "2026-W53"}, // 2026 starts on a Thursday
		{date(1970, 1, 1), "1970-W01"},   // a Thursday: week 1 began 1969-12-29
		{date(1970, 1, 4), "1970-W01"},
		{date(1970, 1, 5), "1970-W02"},
	}
	for _, c := range cases {
		p := FromDate(c.day, Week)
		if p.String() != c.label {
			t.Errorf("week of %s = %s, want %s", c.day.Format("2006-01-02"), p, c.label)
		}
		y, w := c.day.ISOWeek()
		if got := fmt.Sprintf("%04d-W%02d", y, w); got != c.label {
			t.Errorf("time.ISOWeek(%s) = %s, the table says %s", c.day.Format("2006-01-02"), got, c.label)
		}
		q := mustParse(t, c.label)
		if q != p {
			t.Errorf("ParsePeriod(%q) = %v, want %v", c.label, q, p)
		}
		if wd := q.Start().Weekday(); wd != time.Monday {
			t.Errorf("%s starts on a %s, want Monday", c.label, wd)
		}
	}
	if s := mustParse(t, "2020-W53").Start(); !s.Equal(date(2020, 12, 28)) {
		t.Errorf("2020-W53 starts %s, want 2020-12-28", s.Format("2006-01-02"))
	}
}

// Every day from 1900 to 2100: the week FromDate picks has the label that
// time.ISOWeek gives the day, that label parses back to the same week, and
// Start is that week's Monday. Day, month and quarter labels round-trip too.
func TestPeriodsAgainstTimePackage(t *testing.T) {
	for d := date(1900, 1, 1); d.Before(date(2101, 1, 1)); d = d.AddDate(0, 0, 1) {
		w := FromDate(d, Week)
		y, n := d.ISOWeek()
		label := fmt.Sprintf("%04d-W%02d", y, n)
		if w.String() != label {
			t.Fatalf("week of %s = %s, time.ISOWeek says %s", d.Format("2006-01-02"), w, label)
		}
		if got := mustParse(t, label); got != w {
			t.Fatalf("ParsePeriod(%q) = %v, want %v", label, got, w)
		}
		start := w.Start()
		if start.Weekday() != time.Monday || d.Sub(start) < 0 || d.Sub(start) >= 7*24*time.Hour {
			t.Fatalf("week %s starts %s, which is not the Monday on or before %s", w, start.Format("2006-01-02"), d.Format("2006-01-02"))
		}
		day := FromDate(d, Day)
		if day.String() != d.Format("2006-01-02") || !day.Start().Equal(d) {
			t.Fatalf("day %s: got %s starting %s", d.Format("2006-01-02"), day, day.Start())
		}
		if m := FromDate(d, Month); m.String() != d.Format("2006-01") {
			t.Fatalf("month of %s = %s", d.Format("2006-01-02"), m)
		}
		if q := FromDate(d, Quarter); q.String() != fmt.Sprintf("%04d-Q%d", d.Year(), (int(d.Month())+2)/3) {
			t.Fatalf("quarter of %s = %s", d.Format("2006-01-02"), q)
		}
	}
}

func TestConsecutiveIndices(t *testing.T) {
	for _, s := range []string{"2023-12-31", "2020-W53", "2023-12", "2023-Q4", "1969-12-31", "1969-12", "1969-Q4"} {
		p := mustParse(t, s)
		next := mustParse(t, p.Next(1).String())
		if next.Index != p.Index+1 {
			t.Errorf("period after %s is %s with index %d, want %d", p, p.Next(1), next.Index, p.Index+1)
		}
	}
	want := map[string]string{"2023-12-31": "2024-01-01", "2020-W53": "2021-W01", "2023-12": "2024-01", "2023-Q4": "2024-Q1"}
	for s, w := range want {
		if got := mustParse(t, s).Next(1).String(); got != w {
			t.Errorf("after %s comes %s, want %s", s, got, w)
		}
	}
}

func TestFarDates(t *testing.T) {
	// time.Duration spans only ±292 years; day counts must not depend on it.
	for _, d := range []time.Time{date(1, 1, 1), date(1600, 2, 29), date(2400, 12, 31), date(9999, 12, 31)} {
		p := FromDate(d, Day)
		if !p.Start().Equal(d) {
			t.Errorf("day %s comes back as %s", d.Format("2006-01-02"), p.Start().Format("2006-01-02"))
		}
	}
}

func TestCoarsen(t *testing.T) {
	cases := []struct {
		in   string
		g    Grain
		want string
	}{
		{"2024-02-29", Month, "2024-02"},
		{"2024-02-29", Quarter, "2024-Q1"},
		{"2023-12-31", Quarter, "2023-Q4"},
		{"2024-04-01", Quarter, "2024-Q2"},
		{"2021-01-03", Week, "2020-W53"},
		{"2024-12-30", Week, "2025-W01"},
		{"2024-06", Quarter, "2024-Q2"},
		{"2024-07", Quarter, "2024-Q3"},
		{"1969-12", Quarter, "1969-Q4"},
		{"2024-W07", Week, "2024-W07"},
		{"2024-Q3", Quarter, "2024-Q3"},
	}
	for _, c := range cases {
		got, err := mustParse(t, c.in).Coarsen(c.g)
		if err != nil {
			t.Errorf("%s to %s: %v", c.in, c.g, err)
			continue
		}
		if got.String() != c.want || got.Grain != c.g {
			t.Errorf("%s to %s = %s (%s), want %s", c.in, c.g, got, got.Grain, c.want)
		}
	}
	errs := []struct {
		in   string
		g    Grain
		text string
	}{
		{"2024-W07", Month, "weekly periods cannot be grouped into months"},
		{"2024-W07", Quarter, "weekly periods cannot be grouped into quarters"},
		{"2024-03", Day, "the data is monthly"},
		{"2024-03", Week, "the data is monthly"},
		{"2024-Q1", Month, "the data is quarterly"},
	}
	for _, c := range errs {
		_, err := mustParse(t, c.in).Coarsen(c.g)
		if err == nil || !inputerr.Is(err) || !strings.Contains(err.Error(), c.text) {
			t.Errorf("%s to %s: error %v, want an input error containing %q", c.in, c.g, err, c.text)
		}
	}
}

func TestParseGrain(t *testing.T) {
	for i, s := range []string{"day", "week", "month", "quarter", "year", "index"} {
		g, err := ParseGrain(s)
		if err != nil || g != Grain(i) || g.String() != s {
			t.Errorf("ParseGrain(%q) = %v, %v", s, g, err)
		}
	}
	if _, err := ParseGrain("decade"); !inputerr.Is(err) {
		t.Errorf("ParseGrain(decade) error %v, want an input error", err)
	}
	// Common practice: 7 days a week, 52 weeks, 12 months, 4 quarters a
	// year; yearly data and a step index have no seasonal period of their
	// own (1).
	for g, want := range map[Grain]int{Day: 7, Week: 52, Month: 12, Quarter: 4, Year: 1, Index: 1} {
		if got := g.SeasonalPeriod(); got != want {
			t.Errorf("%s seasonal period %d, want %d", g, got, want)
		}
	}
}

func TestYearsAndSteps(t *testing.T) {
	y := mustParse(t, "2024")
	if y.Grain != Year || y.String() != "2024" || !y.Start().Equal(date(2024, 1, 1)) || !y.HasDate() || y.Next(1).String() != "2025" {
		t.Errorf("2024 read as %v %s starting %v", y.Grain, y, y.Start())
	}
	for _, s := range []string{"17", "0", "1799", "2201", "02024"} {
		p := mustParse(t, s)
		if p.Grain != Index || p.HasDate() || !p.Start().IsZero() {
			t.Errorf("%s read as %v (has date %v)", s, p.Grain, p.HasDate())
		}
	}
	if got := mustParse(t, "0042").String(); got != "42" {
		t.Errorf("step 0042 prints as %s", got)
	}
	for _, c := range []struct{ from, want string }{{"2024-02-29", "2024"}, {"2024-11", "2024"}, {"2023-Q4", "2023"}} {
		p, err := mustParse(t, c.from).Coarsen(Year)
		if err != nil || p.String() != c.want {
			t.Errorf("%s to a year: %v %v", c.from, p, err)
		}
	}
	for _, c := range []struct {
		from string
		to   Grain
	}{{"17", Year}, {"2024", Index}, {"2024-W07", Year}, {"2024", Month}} {
		if _, err := mustParse(t, c.from).Coarsen(c.to); !inputerr.Is(err) {
			t.Errorf("%s to %s: got %v, want an input error", c.from, c.to, err)
		}
	}
}
