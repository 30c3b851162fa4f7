package tableio

import (
	"testing"
	"time"
)

// TestWeeksBelongToTheMonthOfTheirThursday checks the week rule against
// ISO 8601's: a week is in the year holding its Thursday. The dates are
// read from a calendar (2026-W01 runs from Monday 29 December 2025;
// 2020-W53 from Monday 28 December 2020; 2025-W44 from Monday 27 October
// 2025, Thursday 30 October; 2025-W40 from Monday 29 September 2025,
// Thursday 2 October).
func TestWeeksBelongToTheMonthOfTheirThursday(t *testing.T) {
	cases := []struct {
		week  string
		grain Grain
		want  string
	}{
		{"2026-W01", Month, "2026-01"},
		{"2026-W01", Quarter, "2026-Q1"},
		{"2026-W01", Year, "2026"},
		{"2020-W53", Year, "2020"},
		{"2020-W53", Month, "2020-12"},
		{"2025-W44", Month, "2025-10"},
		{"2025-W40", Month, "2025-10"},
		{"2025-W40", Quarter, "2025-Q4"},
	}
	for _, c := range cases {
		p, err := ParsePeriod(c.week)
		if err != nil {
			t.Fatal(err)
		}
		got, err := p.BelongsTo(c.grain)
		if err != nil {
			t.Fatalf("%s in %s: %v", c.week, c.grain, err)
		}
		if got.String() != c.want {
			t.Errorf("%s belongs to %s %s, want %s", c.week, c.grain, got, c.want)
		}
		// The year of a week is ISO 8601's own.
		if c.grain == Year {
			y, _ := p.Start().ISOWeek()
			if got.Start().Year() != y {
				t.Errorf("%s: year %d, ISO year %d", c.week, got.Start().Year(), y)
			}
		}
	}
}

// TestEveryWeekInOneYearAndAYearHolds52Or53 counts the weeks each year
// gets over 2000–2040: 52 or 53, and 53 exactly in the ISO long years
// (those whose 28 December falls in week 53, the ISO 8601 rule).
func TestEveryWeekInOneYearAndAYearHolds52Or53(t *testing.T) {
	first, _ := ParsePeriod("2000-W01")
	counts := map[int]int{}
	for w := first; w.Start().Year() <= 2040; w = w.Next(1) {
		y, _ := w.BelongsTo(Year)
		counts[y.Start().Year()]++
	}
	for y := 2000; y < 2040; y++ {
		_, last := time.Date(y, 12, 28, 0, 0, 0, 0, time.UTC).ISOWeek()
		if counts[y] != last {
			t.Errorf("%d: %d weeks, ISO says %d", y, counts[y], last)
		}
	}
}

func TestBelongsToRefusesFinerGrainsAndSteps(t *testing.T) {
	m, _ := ParsePeriod("2026-03")
	if _, err := m.BelongsTo(Week); err == nil {
		t.Error("a month into weeks: no error")
	}
	if _, err := m.BelongsTo(Month); err == nil {
		t.Error("a month into months: no error")
	}
	if _, err := (Period{Index, 4}).BelongsTo(Year); err == nil {
		t.Error("a step into years: no error")
	}
	q, err := m.BelongsTo(Quarter)
	if err != nil || q.String() != "2026-Q1" {
		t.Errorf("2026-03 in quarter: %v %v", q, err)
	}
}
