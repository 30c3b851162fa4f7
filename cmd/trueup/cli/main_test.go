package cli

import (
	"encoding/json"
	"fmt"
	"math"
	"os"
	"path/filepath"
	"regexp"
	"strings"
	"testing"

	"trueup/fixtures"
	"trueup/tableio"
)

// TestDemoIsCoherent runs the demo end to end, reads forecasts.parquet back
// and checks that every aggregate equals the sum of its bottom nodes at
// every step to 1e-9 relative (coherence is the definition of a reconciled
// forecast; Hyndman & Athanasopoulos, Forecasting: Principles and Practice,
// 3rd ed., §11.1).
func TestDemoIsCoherent(t *testing.T) {
	out := t.TempDir()
	if code := run([]string{"demo", "--quiet", "--out", out, "--format", "parquet,csv"}); code != 0 {
		t.Fatalf("demo exited %d", code)
	}
	tb, err := tableio.ReadTable(filepath.Join(out, "forecasts.parquet"), tableio.Parquet)
	if err != nil {
		t.Fatal(err)
	}
	col := func(name string) *tableio.Column {
		for i := range tb.Columns {
			if tb.Columns[i].Name == name {
				return &tb.Columns[i]
			}
		}
		t.Fatalf("forecasts.parquet has no column %q", name)
		return nil
	}
	level, region, store, category := col("level"), col("region"), col("store"), col("category")
	step, fc := col("step"), col("forecast")
	lo80, hi80, lo95, hi95 := col("pi80_lower"), col("pi80_upper"), col("pi95_lower"), col("pi95_upper")

	type cell struct {
		key  string
		step int64
	}
	// Sum the bottom forecasts into every aggregate they belong to.
	sums := map[cell]float64{}
	keyOf := func(i int, useR, useS, useC bool) string {
		part := func(c *tableio.Column, use bool) string {
			if !use {
				return "*"
			}
			return c.Strings[i]
		}
		return part(region, useR) + "/" + part(store, useS) + "/" + part(category, useC)
	}
	n := len(fc.Floats)
	for i := 0; i < n; i++ {
		if level.Strings[i] != "region+store+category" {
			continue
		}
		for _, use := range [][3]bool{{false, false, false}, {false, false, true}, {true, false, false}, {true, false, true}, {true, true, false}} {
			sums[cell{keyOf(i, use[0], use[1], use[2]), step.Ints[i]}] += fc.Floats[i]
		}
	}
	checked := 0
	for i := 0; i < n; i++ {
		// The demo history has no negative value, so reconciliation is
		// non-negative by default; the closed store is exactly zero.
		if fc.Floats[i] < 0 || lo95.Floats[i] < 0 {
			t.Fatalf("row %d: negative forecast %v or bound %v", i, fc.Floats[i], lo95.Floats[i])
		}
		if store.Strings[i] == "Copperbridge" && (fc.Floats[i] != 0 || hi95.Floats[i] != 0) {
			t.Fatalf("closed store Copperbridge forecast %v, upper bound %v; want 0", fc.Floats[i], hi95.Floats[i])
		}
		if !(lo95.Floats[i] <= lo80.Floats[i] && lo80.Floats[i] <= fc.Floats[i] && fc.Floats[i] <= hi80.Floats[i] && hi80.Floats[i] <= hi95.Floats[i]) {
			t.Fatalf("row %d: bounds out of order: %v %v %v %v %v", i, lo95.Floats[i], lo80.Floats[i], fc.Floats[i], hi80.Floats[i], hi95.Floats[i])
		}
		if level.Strings[i] == "region+store+category" {
			continue
		}
		k := keyOf(i, !region.Null[i], !store.Null[i], !category.Null[i])
		want := sums[cell{k, step.Ints[i]}]
		if d := math.Abs(fc.Floats[i] - want); d > 1e-9*math.Max(1, math.Abs(want)) {
			t.Fatalf("%s %s step %d: forecast %v, sum of bottom nodes %v", level.Strings[i], k, step.Ints[i], fc.Floats[i], want)
		}
		checked++
	}
	if checked == 0 {
		t.Fatal("no aggregate rows checked")
	}
	for _, f := range []string{"forecasts.csv", "models.parquet", "models.csv", "residuals.parquet", "run.json"} {
		if st, err := os.Stat(filepath.Join(out, f)); err != nil || st.Size() == 0 {
			t.Errorf("%s missing or empty: %v", f, err)
		}
	}

	// The tables feed trueup reconcile: bottom-up of the demo's base
	// forecasts gives a total equal to the sum of the bottom bases.
	again := filepath.Join(out, "again")
	if code := run([]string{"reconcile", "--base", filepath.Join(out, "forecasts.parquet"),
		"--residuals", filepath.Join(out, "residuals.parquet"), "--hierarchy", "region,store", "--hierarchy", "category",
		"--method", "bottom-up", "--out", again}); code != 0 {
		t.Fatalf("reconcile of the demo's tables exited %d", code)
	}
	rt, err := tableio.ReadTable(filepath.Join(again, "forecasts.parquet"), tableio.Parquet)
	if err != nil {
		t.Fatal(err)
	}
	base := col("base")
	want := 0.0
	for i := 0; i < n; i++ {
		if level.Strings[i] == "region+store+category" && step.Ints[i] == 1 {
			want += base.Floats[i]
		}
	}
	var rlevel, rstep, rfc *tableio.Column
	for i := range rt.Columns {
		switch rt.Columns[i].Name {
		case "level":
			rlevel = &rt.Columns[i]
		case "step":
			rstep = &rt.Columns[i]
		case "forecast":
			rfc = &rt.Columns[i]
		}
	}
	found := false
	for i := range rfc.Floats {
		if rlevel.Strings[i] == "total" && rstep.Ints[i] == 1 {
			found = true
			if math.Abs(rfc.Floats[i]-want) > 1e-9*want {
				t.Errorf("bottom-up total %v, sum of bottom bases %v", rfc.Floats[i], want)
			}
		}
	}
	if !found {
		t.Error("reconciled table has no total at step 1")
	}
}

// TestBadInputs checks that every kind of bad input exits 2 with a message
// naming the problem and leaves no output files.
func TestBadInputs(t *testing.T) {
	dir := t.TempDir()
	write := func(name, content string) string {
		p := filepath.Join(dir, name)
		if err := os.WriteFile(p, []byte(content), 0o644); err != nil {
			t.Fatal(err)
		}
		return p
	}
	good := "period,region,store,category,sales\n" +
		"2024-01,north,N1,food,10\n2024-02,north,N1,food,11\n2024-03,north,N1,food,12\n2024-04,north,N1,food,13\n"
	goodCSV := write("good.csv", good)
	demo := filepath.Join(dir, "demo.parquet")
	if err := os.WriteFile(demo, fixtures.DemoMonthlyParquet, 0o644); err != nil {
		t.Fatal(err)
	}
	nest := []string{"--hierarchy", "region,store", "--hierarchy", "category"}
	cases := []struct {
		name  string
		args  []string
		input string // CSV content; "" = use the args as they are
		want  string // message substring
	}{
		{"missing file", []string{"--input", filepath.Join(dir, "nope.csv")}, "", "nope.csv"},
		{"not a table", []string{"--input", write("x.txt", "hello")}, "", "x.txt"},
		{"garbage parquet", []string{"--input", write("g.parquet", "not parquet at all")}, "", "g.parquet"},
		{"empty file", []string{"--input", write("empty.csv", "")}, "", "empty.csv"},
		{"missing value column", []string{"--input", goodCSV, "--value", "revenue"}, "", "sales"},
		{"missing key column", []string{"--input", goodCSV, "--hierarchy", "region,shop"}, "", "shop"},
		{"non-numeric value", nil, "period,region,store,category,sales\n2024-01,north,N1,food,ten\n", "ten"},
		{"NaN value", nil, "period,region,store,category,sales\n2024-01,north,N1,food,NaN\n", "NaN"},
		{"infinite value", nil, "period,region,store,category,sales\n2024-01,north,N1,food,Inf\n", "Inf"},
		{"bad period", nil, "period,region,store,category,sales\n2024-13,north,N1,food,1\n", "2024-13"},
		{"duplicate", nil, good + "2024-04,north,N1,food,1\n", "--sum-duplicates"},
		{"nesting", nil, good + "2024-01,south,N1,toys,1\n", `"N1"`},
		{"horizon 0", []string{"--input", goodCSV, "--horizon", "0"}, "", "--horizon"},
		{"unknown grain", []string{"--input", goodCSV, "--grain", "fortnight"}, "", "fortnight"},
		{"unknown format", []string{"--input", goodCSV, "--format", "xlsx"}, "", "xlsx"},
		{"unknown method", []string{"--input", goodCSV, "--method", "guess"}, "", "guess"},
		{"unknown family", []string{"--input", goodCSV, "--family", "oracle"}, "", "oracle"},
		{"no workers", []string{"--input", goodCSV, "--workers", "0"}, "", "--workers"},
		{"negative workers", []string{"--input", goodCSV, "--workers", "-1"}, "", "--workers"},
		{"level twice", []string{"--input", goodCSV, "--intervals", "80,80"}, "", "--intervals"},
		{"horizon beyond the history", []string{"--input", goodCSV, "--horizon", "10000"}, "", "--horizon: a horizon of 10000"},
		{"period beyond the history", []string{"--input", goodCSV, "--season-length", "3"}, "", "supports a season length of at most 2"},
		{"plan grain no coarser than the data", []string{"--input", goodCSV, "--plan-grain", "quarter,month"}, "", "--plan-grain: the data is by month"},
		{"unknown plan grain", []string{"--input", goodCSV, "--plan-grain", "fortnight"}, "", "--plan-grain: \"fortnight\""},
		{"out is a file", []string{"--input", goodCSV, "--out", goodCSV}, "", "--out: " + goodCSV + ": is a file"},
	}
	for i, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			args := c.args
			if c.input != "" {
				args = []string{"--input", write("case"+string(rune('a'+i))+".csv", c.input)}
			}
			if !containsFlag(args, "--hierarchy") {
				args = append(args, nest...)
			}
			out := filepath.Join(dir, "out-"+strings.ReplaceAll(c.name, " ", "-"))
			full := append([]string{"forecast", "--quiet", "--out", out}, args...)
			stderr := captureStderr(t, func() {
				if code := run(full); code != 2 {
					t.Errorf("exit %d, want 2", code)
				}
			})
			if !strings.Contains(stderr, c.want) {
				t.Errorf("message %q does not mention %q", stderr, c.want)
			}
			if entries, _ := os.ReadDir(out); len(entries) > 0 {
				t.Errorf("output files left behind: %v", entries)
			}
		})
	}
}

func TestNegativeValuesAreWarnings(t *testing.T) {
	dir := t.TempDir()
	p := filepath.Join(dir, "neg.csv")
	var b strings.Builder
	b.WriteString("period,store,sales\n")
	for m := 1; m <= 12; m++ {
		for _, s := range []string{"A", "B"} {
			v := "5"
			if m == 6 && s == "B" {
				v = "-3"
			}
			b.WriteString("2024-" + twoDigits(m) + "," + s + "," + v + "\n")
		}
	}
	os.WriteFile(p, []byte(b.String()), 0o644)
	out := filepath.Join(dir, "out")
	if code := run([]string{"forecast", "--quiet", "--input", p, "--hierarchy", "store", "--season-length", "1", "--horizon", "2", "--out", out}); code != 0 {
		t.Fatalf("exit %d", code)
	}
	data, err := os.ReadFile(filepath.Join(out, "run.json"))
	if err != nil || !strings.Contains(string(data), "1 row is negative (returns?); kept") {
		t.Fatalf("run.json lacks the negative-value warning: %v\n%s", err, data)
	}
}

func twoDigits(m int) string {
	if m < 10 {
		return "0" + string(rune('0'+m))
	}
	return "1" + string(rune('0'+m-10))
}

func containsFlag(args []string, flag string) bool {
	for _, a := range args {
		if a == flag {
			return true
		}
	}
	return false
}

// captureStderr runs f with os.Stderr redirected and returns what it wrote.
func captureStderr(t *testing.T, f func()) string {
	t.Helper()
	r, w, err := os.Pipe()
	if err != nil {
		t.Fatal(err)
	}
	old := os.Stderr
	os.Stderr = w
	f()
	os.Stderr = old
	w.Close()
	data := make([]byte, 1<<16)
	n, _ := r.Read(data)
	return string(data[:n])
}

func TestInspectReportsOpeningsAndClosures(t *testing.T) {
	dir := t.TempDir()
	p := filepath.Join(dir, "demo.parquet")
	if err := os.WriteFile(p, fixtures.DemoMonthlyParquet, 0o644); err != nil {
		t.Fatal(err)
	}
	// Add a duplicate and a negative row to a CSV copy of a small table.
	csv := filepath.Join(dir, "dup.csv")
	os.WriteFile(csv, []byte("period,store,sales\n2024-01,A,1\n2024-01,A,2\n2024-02,A,-1\n2024-03,A,0\n"), 0o644)

	var out strings.Builder
	root := newRootCmd()
	root.SetOut(&out)
	root.SetArgs([]string{"inspect", "--json", "--input", p, "--hierarchy", "region,store", "--hierarchy", "category"})
	if err := root.Execute(); err != nil {
		t.Fatal(err)
	}
	var rep struct {
		Rows          int `json:"bottom_series"`
		NodesPerLevel []struct {
			Level      string `json:"level"`
			LateStarts int    `json:"opened_late"`
			EarlyEnds  int    `json:"closed"`
		} `json:"nodes_per_level"`
		LateStarts []struct {
			Level string `json:"level"`
			Node  string `json:"node"`
		} `json:"opened_late"`
	}
	if err := json.Unmarshal([]byte(out.String()), &rep); err != nil {
		t.Fatal(err)
	}
	// The demo chain opens three stores and closes one (fixtures/demo/README.md).
	if len(rep.NodesPerLevel) < 5 {
		t.Fatalf("inspect report: %s", out.String())
	}
	stores := rep.NodesPerLevel[4]
	if rep.Rows != 224 || stores.Level != "region+store" || stores.LateStarts != 3 || stores.EarlyEnds != 1 || len(rep.LateStarts) != 3 {
		t.Errorf("inspect report: %s", out.String())
	}
	// Each opening names its node as every table and command does.
	for _, sp := range rep.LateStarts {
		if !strings.HasPrefix(sp.Node, "region=") || !strings.Contains(sp.Node, " store=") {
			t.Errorf("an opening is named %q, not by its label (region=… store=…)", sp.Node)
		}
	}

	out.Reset()
	root = newRootCmd()
	root.SetOut(&out)
	root.SetArgs([]string{"inspect", "--input", csv, "--hierarchy", "store"})
	if err := root.Execute(); err != nil {
		t.Fatal(err)
	}
	for _, want := range []string{`duplicate rows \(same key and period\) +1\n`, `negative values +1\n`, `zero values +1\n`} {
		if !regexp.MustCompile(want).MatchString(out.String()) {
			t.Errorf("inspect output lacks %q:\n%s", want, out.String())
		}
	}
}

// TestInspectCountsDuplicatesAtACoarserGrain: a day repeated in a daily
// table is a duplicate whatever grain the days are summed into, so
// inspect --grain week reports the one forecast --grain week refuses.
func TestInspectCountsDuplicatesAtACoarserGrain(t *testing.T) {
	var b strings.Builder
	b.WriteString("day,store,sales\n")
	for d := 1; d <= 28; d++ {
		fmt.Fprintf(&b, "2024-01-%02d,A,%d\n", d, 10+d%7)
	}
	b.WriteString("2024-01-09,A,4\n") // the repeated day
	path := writeFile(t, t.TempDir(), "days.csv", b.String())
	for _, grain := range [][]string{nil, {"--grain", "week"}} {
		var out strings.Builder
		root := newRootCmd()
		root.SetOut(&out)
		root.SetArgs(append([]string{"inspect", "--json", "--input", path, "--time", "day", "--hierarchy", "store"}, grain...))
		if err := root.Execute(); err != nil {
			t.Fatal(err)
		}
		var rep struct {
			Duplicates int `json:"duplicate_rows"`
		}
		if err := json.Unmarshal([]byte(out.String()), &rep); err != nil {
			t.Fatal(err)
		}
		if rep.Duplicates != 1 {
			t.Errorf("inspect %v: %d duplicate rows, want 1", grain, rep.Duplicates)
		}
		args := append([]string{"forecast", "--quiet", "--input", path, "--time", "day", "--hierarchy", "store", "--out", filepath.Join(t.TempDir(), "out")}, grain...)
		stderr := captureStderr(t, func() {
			if code := run(args); code != exitInput {
				t.Errorf("forecast %v: exit %d, want %d", grain, code, exitInput)
			}
		})
		if !strings.Contains(stderr, "repeats key") || !strings.Contains(stderr, "; add --sum-duplicates to add such rows together") {
			t.Errorf("forecast %v: %q does not say to add --sum-duplicates", grain, stderr)
		}
	}
}
