package cli

import (
	"bufio"
	"encoding/json"
	"os"
	"path/filepath"
	"sort"
	"strings"
	"testing"

	"github.com/spf13/cobra"
	"github.com/spf13/pflag"

	"trueup/engine"
	"trueup/internal/glossary"
	"trueup/models/families"
)

// glossaryPath is the one list of user-visible names.
const glossaryPath = "../../../docs/glossary.md"

// checkGlossary fails on every shown name the section does not list and
// on every entry of the section that nothing shows.
func checkGlossary(t *testing.T, g *glossary.Glossary, section string, shown []string) {
	t.Helper()
	unknown, unused := g.Check(section, shown)
	for _, n := range unknown {
		t.Errorf("%s: %q is not in %s", section, n, glossaryPath)
	}
	for _, n := range unused {
		t.Errorf("%s: %s lists %q, which nothing shows any more", section, glossaryPath, n)
	}
}

// TestGlossaryFlags walks the command tree: every command and every flag
// of every command (deprecated aliases too) is in the glossary.
func TestGlossaryFlags(t *testing.T) {
	g, err := glossary.Load(glossaryPath)
	if err != nil {
		t.Fatal(err)
	}
	var commands, flags []string
	var walk func(c *cobra.Command)
	walk = func(c *cobra.Command) {
		for _, sub := range c.Commands() {
			if sub.Name() == "help" || sub.Name() == "completion" {
				continue // cobra's own
			}
			commands = append(commands, sub.Name())
			sub.LocalFlags().VisitAll(func(f *pflag.Flag) {
				if f.Name != "help" {
					flags = append(flags, "--"+f.Name)
				}
			})
			walk(sub)
		}
	}
	walk(newRootCmd())
	checkGlossary(t, g, "Commands", commands)
	checkGlossary(t, g, "Flags", flags)
}

// TestGlossaryTablesAndRunJSON writes forecasts (with plan totals, with
// a lock, with bootstrap intervals) and a backtest as CSV, reads every
// table's header and every key of each run.json, and checks them against
// the glossary. The sales table's own key columns (region, store,
// category) are the user's names, not ours.
func TestGlossaryTablesAndRunJSON(t *testing.T) {
	g, err := glossary.Load(glossaryPath)
	if err != nil {
		t.Fatal(err)
	}
	in := smallInput(t)
	source := []string{"--input", in, "--hierarchy", "region,store", "--hierarchy", "category", "--family", "drift", "--horizon", "4", "--quiet", "--format", "csv", "--no-report"}
	fc := filepath.Join(t.TempDir(), "fc")
	if code := run(append([]string{"forecast", "--out", fc, "--plan-grain", "quarter", "--method", "auto", "--origins", "2", "--calibrate", "2"}, source...)); code != 0 {
		t.Fatalf("forecast exited %d", code)
	}
	bt := filepath.Join(t.TempDir(), "bt")
	if code := run(append([]string{"backtest", "--out", bt, "--origins", "2"}, source...)); code != 0 {
		t.Fatalf("backtest exited %d", code)
	}
	// A forecast with a lock on the total's first forecast period, for
	// run.json's record of the locks.
	first := csvRecord(t, filepath.Join(fc, "forecasts.csv"), "period")
	locks := filepath.Join(t.TempDir(), "locks.csv")
	if err := os.WriteFile(locks, []byte("region,store,category,period,value\n,,,"+first+",1000\n"), 0o644); err != nil {
		t.Fatal(err)
	}
	lk := filepath.Join(t.TempDir(), "lk")
	if code := run(append([]string{"forecast", "--out", lk, "--lock", locks}, source...)); code != 0 {
		t.Fatalf("forecast with a lock exited %d", code)
	}
	bs := filepath.Join(t.TempDir(), "bs")
	if code := run(append([]string{"forecast", "--out", bs, "--interval-method", "bootstrap"}, source...)); code != 0 {
		t.Fatalf("forecast with bootstrap intervals exited %d", code)
	}
	userKeys := map[string]bool{"region": true, "store": true, "category": true}
	var columns, keys []string
	for _, dir := range []string{fc, bt, lk, bs} {
		tables, _ := filepath.Glob(filepath.Join(dir, "*.csv"))
		if len(tables) == 0 {
			t.Fatalf("no tables in %s", dir)
		}
		for _, p := range tables {
			for _, c := range csvHeader(t, p) {
				if !userKeys[c] {
					columns = append(columns, c)
				}
			}
		}
		raw, err := os.ReadFile(filepath.Join(dir, "run.json"))
		if err != nil {
			t.Fatal(err)
		}
		var doc any
		if err := json.Unmarshal(raw, &doc); err != nil {
			t.Fatal(err)
		}
		keys = append(keys, jsonKeys(doc, "")...)
	}
	keys = append(keys, printedJSONKeys(t, in)...)
	// The factors of an applied calibration, which run.json holds only
	// when calibration helped (the run above need not apply it).
	applied, err := json.Marshal(engine.CalibrationRecord{Applied: true, Calibration: &engine.Calibration{
		Levels: []string{"total"}, Groups: [][2]int{{1, 4}}, Intervals: []float64{80}, Factor: [][][]float64{{{1.1}}}, Count: [][]int{{12}}}})
	if err != nil {
		t.Fatal(err)
	}
	var rec any
	if err := json.Unmarshal(applied, &rec); err != nil {
		t.Fatal(err)
	}
	keys = append(keys, jsonKeys(rec, "")...)
	checkGlossary(t, g, "Table columns", columns)
	checkGlossary(t, g, "JSON keys", keys)
}

// printedJSONKeys runs inspect --json and fit --json (every family, and a
// transform, so that every family's parameters show) on the input and
// returns every key they print. forecast --json and backtest --json print
// their run.json, read above.
func printedJSONKeys(t *testing.T, in string) []string {
	t.Helper()
	out, err := runCapture("inspect", "--input", in, "--hierarchy", "region,store", "--hierarchy", "category", "--json")
	if err != nil {
		t.Fatal(err)
	}
	var doc any
	if err := json.Unmarshal([]byte(out), &doc); err != nil {
		t.Fatalf("inspect --json: %v", err)
	}
	keys := jsonKeys(doc, "")
	fits := [][]string{{"--family", "arima", "--transform", "boxcox"}, {"--model", "ARIMA(0,0,1)(0,1,1)", "--constant"},
		{"--model", "ARIMA(1,1,0) + 2 Fourier"}}
	for _, f := range families.Registry().Names() {
		fits = append(fits, []string{"--family", f})
	}
	for _, f := range fits {
		args := append([]string{"fit", "--input", in, "--key", "store", "--sum-duplicates", "--horizon", "3", "--json"}, f...)
		for _, rec := range fitRecords(t, args...) {
			keys = append(keys, jsonKeys(rec, "")...)
		}
	}
	// A strongly seasonal series, so that Theta's seasonal adjustment
	// and a trended, damped, seasonal ETS form show their parameters.
	air := writeAirCSV(t, false)
	for _, f := range [][]string{{"--family", "theta"}, {"--model", "ETS(M,Ad,M)"}} {
		args := append([]string{"fit", "--input", air, "--time", "month", "--key", "store", "--horizon", "3", "--json"}, f...)
		for _, rec := range fitRecords(t, args...) {
			keys = append(keys, jsonKeys(rec, "")...)
		}
	}
	return keys
}

// csvRecord returns the column named column of the first data row of the
// CSV file at path.
func csvRecord(t *testing.T, path, column string) string {
	t.Helper()
	b, err := os.ReadFile(path)
	if err != nil {
		t.Fatal(err)
	}
	lines := strings.SplitN(string(b), "\n", 3)
	if len(lines) < 2 {
		t.Fatalf("%s has no data row", path)
	}
	for i, c := range strings.Split(lines[0], ",") {
		if c == column {
			return strings.Split(lines[1], ",")[i]
		}
	}
	t.Fatalf("%s has no column %q", path, column)
	return ""
}

// csvHeader returns the column names of a CSV file's first line.
func csvHeader(t *testing.T, path string) []string {
	t.Helper()
	f, err := os.Open(path)
	if err != nil {
		t.Fatal(err)
	}
	defer f.Close()
	sc := bufio.NewScanner(f)
	sc.Buffer(nil, 1<<20)
	if !sc.Scan() {
		t.Fatalf("%s is empty", path)
	}
	return strings.Split(sc.Text(), ",")
}

// jsonKeys lists every object key in doc, at any depth. The keys of the
// objects that count nodes by model family are family names, and those of
// a lock's key are the user's key columns (data), so only the objects
// themselves are checked, not what they hold.
func jsonKeys(doc any, parent string) []string {
	var out []string
	switch v := doc.(type) {
	case map[string]any:
		names := make([]string, 0, len(v))
		for k := range v {
			names = append(names, k)
		}
		sort.Strings(names)
		for _, k := range names {
			if parent == "models" || parent == "key" {
				continue // family names, the user's key columns: data
			}
			out = append(out, k)
			out = append(out, jsonKeys(v[k], k)...)
		}
	case []any:
		for _, e := range v {
			out = append(out, jsonKeys(e, parent)...)
		}
	}
	return out
}
