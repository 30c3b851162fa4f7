package tableio

import (
	"fmt"
	"strings"
)

// A program that stores a local date as an instant writes the local
// midnight converted to UTC: in a session at UTC+01:00, 2024-02-01 becomes
// 2024-01-31T23:00:00Z, and dated in UTC every period falls one day early
// (a month early for first-of-month dates). utcClock watches the UTC time
// of day of every period of a column to tell such a column apart from real
// times of day.
//
// The rule: every period is an instant in UTC (a Parquet or Arrow
// timestamp adjusted to UTC without a stored zone, or text ending in Z or
// +00:00), every time of day lies on a quarter hour (time zone offsets
// do), and all lie within one hour of each other (one offset, or one and
// its daylight-saving shift) from 11:00 to 23:45, over at least two days
// (a single timestamp is as likely a real time of day). Those are local
// midnights at UTC+00:15 to UTC+13:00, and each period is read as the next
// UTC day. Times from 00:15 to 10:45 are local midnights west of UTC,
// whose UTC date already is the local date. A time of day at 11:00 or
// 12:00 could also be a midnight at UTC−11 or UTC−12; the rule takes the
// eastern reading, as UTC−11 and UTC−12 hold only a few small islands
// (common practice, from the time zone database's zone list).
type utcClock struct {
	instants   int  // periods read from UTC instants
	others     bool // some period was not a UTC instant (a date, or a local or zoned time)
	lo, hi     int  // lowest and highest second of the day seen
	offQuarter bool // some time of day is not on a quarter hour
	firstDay   int  // day of the first instant
	manyDays   bool // instants fall on more than one day
}

// Bounds of the eastern reading, in seconds of the UTC day.
const (
	eastFrom    = 11 * 3600
	dayLength   = 86400
	quarterHour = 900
)

// instant records a period read from an instant at sec seconds into the
// UTC day day (days since 1970-01-01).
func (u *utcClock) instant(day, sec int) {
	if u.instants == 0 {
		u.firstDay = day
	} else if day != u.firstDay {
		u.manyDays = true
	}
	if u.instants == 0 || sec < u.lo {
		u.lo = sec
	}
	if u.instants == 0 || sec > u.hi {
		u.hi = sec
	}
	u.instants++
	if sec%quarterHour != 0 {
		u.offQuarter = true
	}
}

// other records a period not read from a UTC instant.
func (u *utcClock) other() { u.others = true }

// localMidnights returns 1, and a note saying so, when the instants are
// local midnights east of UTC (see utcClock), and 0 otherwise.
func (u *utcClock) localMidnights() (int, string) {
	if u.others || !u.manyDays || u.offQuarter || u.lo < eastFrom || u.hi-u.lo > 3600 {
		return 0, ""
	}
	offset := func(sec int) string {
		m := (dayLength - sec) / 60
		return fmt.Sprintf("UTC+%02d:%02d", m/60, m%60)
	}
	clock := func(sec int) string { return fmt.Sprintf("%02d:%02d", sec/3600, sec/60%60) }
	at, zone := clock(u.lo), offset(u.lo)
	if u.hi != u.lo {
		at, zone = clock(u.lo)+" and "+clock(u.hi), offset(u.lo)+" and "+offset(u.hi)
	}
	return 1, fmt.Sprintf("every period is a UTC timestamp at %s, which is local midnight at %s: "+
		"the periods are read as those local dates (a timestamp at %s UTC is read as the next day)", at, zone, clock(u.hi))
}

// utcSecondOfDay returns the second of the day of a period label that is
// a date with a time of day in UTC (a zone of Z, +00, +0000 or +00:00),
// and false for any other label.
func utcSecondOfDay(s string) (int, bool) {
	s = strings.TrimSpace(s)
	if len(s) < 16 || (s[10] != 'T' && s[10] != 't' && s[10] != ' ') {
		return 0, false
	}
	rest := s[11:]
	switch {
	case strings.HasSuffix(rest, "Z") || strings.HasSuffix(rest, "z"):
		rest = rest[:len(rest)-1]
	case strings.HasSuffix(rest, "+00:00"):
		rest = rest[:len(rest)-6]
	case strings.HasSuffix(rest, "+0000"):
		rest = rest[:len(rest)-5]
	case strings.HasSuffix(rest, "+00") && len(rest) > 8:
		rest = rest[:len(rest)-3]
	default:
		return 0, false
	}
	if len(rest) < 5 || !digits(rest[:2]) || rest[2] != ':' || !digits(rest[3:5]) {
		return 0, false
	}
	sec := (int(rest[0]-'0')*10+int(rest[1]-'0'))*3600 + (int(rest[3]-'0')*10+int(rest[4]-'0'))*60
	if len(rest) >= 8 && rest[5] == ':' && digits(rest[6:8]) {
		sec += int(rest[6]-'0')*10 + int(rest[7]-'0')
		if len(rest) > 8 && strings.Trim(rest[9:], "0") != "" {
			sec = -1 // a fraction of a second: not a midnight anywhere
		}
	}
	return sec, true
}

// secondOfDay turns units into the day (perSec units a second) into
// seconds, or −1 when they hold a fraction of a second, which no midnight
// does.
func secondOfDay(units, perSec int) int {
	if units%perSec != 0 {
		return -1
	}
	return units / perSec
}
