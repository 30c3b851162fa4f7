package tableio

import (
	"path/filepath"
	"reflect"
	"strings"
	"testing"
	"time"

	"github.com/apache/arrow-go/v18/arrow"
	"github.com/apache/arrow-go/v18/arrow/array"

	"trueup/inputerr"
)

// localMidnights returns first-of-month local midnights of 2024 at the
// zone loc, as instants.
func localMidnights(loc *time.Location, months int) []time.Time {
	var out []time.Time
	for m := 0; m < months; m++ {
		out = append(out, time.Date(2024, time.Month(m+1), 1, 0, 0, 0, 0, loc))
	}
	return out
}

// A program in a session at UTC+01:00 (Europe/Berlin, with daylight
// saving from the end of March) that writes first-of-month dates as UTC
// timestamps stores 2024-01-31T23:00Z, …, 2024-04-30T22:00Z. Dated in UTC
// every period is a month early; read as local midnights, they are the
// months written. The offsets come from the time zone database shipped
// with Go (time.LoadLocation); checked in Parquet, Arrow IPC and CSV.
func TestLocalMidnightsReadAsLocalDates(t *testing.T) {
	berlin, err := time.LoadLocation("Europe/Berlin")
	if err != nil {
		t.Skip("no time zone database:", err)
	}
	stamps := localMidnights(berlin, 6)
	want := []string{"2024-01-01", "2024-02-01", "2024-03-01", "2024-04-01", "2024-05-01", "2024-06-01"}
	vals := make([]float64, len(stamps))

	b := array.NewTimestampBuilder(mem, &arrow.TimestampType{Unit: arrow.Microsecond, TimeZone: "UTC"})
	for _, s := range stamps {
		b.Append(arrow.Timestamp(s.UnixMicro()))
	}
	ts := b.NewArray()
	pq := filepath.Join(t.TempDir(), "m.parquet")
	writeParquetBatches(t, pq, 1<<20, batch(col{"when", ts}, col{"v", floats(vals...)}))
	ipcPath := filepath.Join(t.TempDir(), "m.arrow")
	writeIPCBatches(t, ipcPath, batch(col{"when", ts}, col{"v", floats(vals...)}))
	var csv strings.Builder
	csv.WriteString("when,v\n")
	for _, s := range stamps {
		csv.WriteString(s.UTC().Format(time.RFC3339) + ",1\n")
	}
	csvPath := writeFile(t, "m.csv", csv.String())

	for _, path := range []string{pq, ipcPath, csvPath} {
		r, err := Read(path, ReadOptions{Time: "when", Value: "v"})
		if err != nil {
			t.Fatal(err)
		}
		if got := periodsOf(r.Periods); !reflect.DeepEqual(got, want) {
			t.Errorf("%s: periods %v, want %v", filepath.Base(path), got, want)
		}
		if len(r.Notes) != 1 || !strings.Contains(r.Notes[0], "22:00 and 23:00, which is local midnight at UTC+02:00 and UTC+01:00") {
			t.Errorf("%s: notes %q, want one naming both offsets", filepath.Base(path), r.Notes)
		}
	}
}

// Times that are not all local midnights keep their UTC date: real times
// of day (one at 09:13), local midnights west of UTC (05:00, whose UTC
// date already is the local date), and a lone timestamp.
func TestRealTimesOfDayKeepTheirUTCDate(t *testing.T) {
	cases := []struct {
		name  string
		csv   string
		want  []string
		notes int
	}{
		{"times of day", "w,v\n2024-01-31T23:00:00Z,1\n2024-02-29T09:13:00Z,1\n", []string{"2024-01-31", "2024-02-29"}, 0},
		{"west of UTC", "w,v\n2024-01-01T05:00:00Z,1\n2024-02-01T05:00:00Z,1\n", []string{"2024-01-01", "2024-02-01"}, 0},
		{"one timestamp", "w,v\n2024-01-31T23:00:00Z,1\n", []string{"2024-01-31"}, 0},
		{"no zone", "w,v\n2024-01-31T23:00:00,1\n2024-02-29T23:00:00,1\n", []string{"2024-01-31", "2024-02-29"}, 0},
		{"east of UTC", "w,v\n2024-01-31T13:00:00Z,1\n2024-02-29T13:00:00Z,1\n", []string{"2024-02-01", "2024-03-01"}, 1},
	}
	for _, c := range cases {
		r, err := Read(writeFile(t, "t.csv", c.csv), ReadOptions{Time: "w", Value: "v"})
		if err != nil {
			t.Fatal(err)
		}
		if got := periodsOf(r.Periods); !reflect.DeepEqual(got, c.want) || len(r.Notes) != c.notes {
			t.Errorf("%s: periods %v notes %q, want %v and %d notes", c.name, got, r.Notes, c.want, c.notes)
		}
	}
}

// Spreadsheet serial dates (days from 1899-12-30, so 45292 is 2024-01-01,
// as LibreOffice Calc and other spreadsheets count them) are refused
// rather than read as a step index; stated as steps they are steps.
func TestSpreadsheetSerialDatesRefused(t *testing.T) {
	csv := "p,v\n45292,1\n45323,2\n45352,3\n"
	_, err := Read(writeFile(t, "s.csv", csv), ReadOptions{Time: "p", Value: "v"})
	if !inputerr.Is(err) || inputerr.OptionOf(err) != "TimeKind" || !strings.Contains(err.Error(), "45292 is 2024-01-01") ||
		!strings.Contains(err.Error(), `column "p"`) {
		t.Fatalf("got %v, want an input error naming column p, TimeKind and 45292 as 2024-01-01", err)
	}
	ints := array.NewInt64Builder(mem)
	ints.AppendValues([]int64{45292, 45323}, nil)
	path := filepath.Join(t.TempDir(), "s.parquet")
	writeParquetBatches(t, path, 1<<20, batch(col{"p", ints.NewArray()}, col{"v", floats(1, 2)}))
	if _, err := Read(path, ReadOptions{Time: "p", Value: "v"}); !inputerr.Is(err) || !strings.Contains(err.Error(), "spreadsheet serial dates") {
		t.Errorf("Parquet: got %v, want the serial date refusal", err)
	}
	r, err := Read(writeFile(t, "s.csv", csv), ReadOptions{Time: "p", Value: "v", TimeKind: TimeSteps})
	if err != nil || r.Periods[0] != (Period{Index, 45292}) {
		t.Errorf("as steps: %v %v, want step 45292", r, err)
	}
}

// ColumnPeriods reads a table column in every form Read reads: labels,
// dates as text, timestamps, Date columns and integer years.
func TestColumnPeriodsForms(t *testing.T) {
	cases := []struct {
		c    Column
		want []string
	}{
		{Column{Name: "p", Type: String, Strings: []string{"2036-01", "2036-02"}}, []string{"2036-01", "2036-02"}},
		{Column{Name: "p", Type: String, Strings: []string{"2036-01-01", "2036-02-01"}}, []string{"2036-01-01", "2036-02-01"}},
		{Column{Name: "p", Type: String, Strings: []string{"2036-01-01T00:00:00Z", "2036-02-01T00:00:00Z"}}, []string{"2036-01-01", "2036-02-01"}},
		{Column{Name: "p", Type: Date, Ints: []int64{24472, 24503}}, []string{"2037-01-01", "2037-02-01"}},
		{Column{Name: "p", Type: Int64, Ints: []int64{2036, 2037}}, []string{"2036", "2037"}},
		{Column{Name: "p", Type: Float64, Floats: []float64{2036, 2037}}, []string{"2036", "2037"}},
	}
	for _, c := range cases {
		got, _, err := ColumnPeriods(c.c, TimeAuto)
		if err != nil || !reflect.DeepEqual(periodsOf(got), c.want) {
			t.Errorf("%v: %v %v, want %v", c.c, periodsOf(got), err, c.want)
		}
	}
	_, _, err := ColumnPeriods(Column{Name: "p", Type: String, Strings: []string{"2036-01", ""}, Null: []bool{false, true}}, TimeAuto)
	if !inputerr.Is(err) || !strings.Contains(err.Error(), "row 2") {
		t.Errorf("empty period: got %v, want an input error at row 2", err)
	}
}

// A table read by ReadTable gives ColumnPeriods the periods Read gives,
// for timestamps in UTC holding local midnights, timestamps with a zone,
// and wall-clock timestamps without one (which stay as written, even at
// 23:00).
func TestReadTablePeriodsMatchRead(t *testing.T) {
	berlin, err := time.LoadLocation("Europe/Berlin")
	if err != nil {
		t.Skip("no time zone database:", err)
	}
	stamps := localMidnights(berlin, 4)
	for _, tz := range []string{"UTC", "Europe/Berlin", ""} {
		b := array.NewTimestampBuilder(mem, &arrow.TimestampType{Unit: arrow.Millisecond, TimeZone: tz})
		for _, s := range stamps {
			if tz == "" { // wall clock: 23:00 on the day before, as written
				s = time.Date(s.Year(), s.Month(), s.Day(), 0, 0, 0, 0, time.UTC).Add(-time.Hour)
			}
			b.Append(arrow.Timestamp(s.UnixMilli()))
		}
		ts := b.NewArray()
		for _, f := range []Format{Parquet, Arrow} {
			path := filepath.Join(t.TempDir(), "t"+f.Ext())
			rec := batch(col{"when", ts}, col{"v", floats(1, 2, 3, 4)})
			if f == Parquet {
				writeParquetBatches(t, path, 1<<20, rec)
			} else {
				writeIPCBatches(t, path, rec)
			}
			r, err := Read(path, ReadOptions{Time: "when", Value: "v"})
			if err != nil {
				t.Fatal(err)
			}
			tb, err := ReadTable(path, f)
			if err != nil {
				t.Fatal(err)
			}
			got, _, err := ColumnPeriods(tb.Columns[0], TimeAuto)
			if err != nil {
				t.Fatal(err)
			}
			if !reflect.DeepEqual(periodsOf(got), periodsOf(r.Periods)) {
				t.Errorf("zone %q, %s: ReadTable gives %v, Read %v", tz, f, periodsOf(got), periodsOf(r.Periods))
			}
			if want := "2024-01-01"; tz != "" && periodsOf(got)[0] != want {
				t.Errorf("zone %q, %s: first period %s, want %s", tz, f, periodsOf(got)[0], want)
			}
		}
	}
}
