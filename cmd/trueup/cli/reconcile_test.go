package cli

import (
	"crypto/sha256"
	"encoding/hex"
	"encoding/json"
	"fmt"
	"io"
	"math"
	"os"
	"path/filepath"
	"strings"
	"testing"

	"github.com/apache/arrow-go/v18/arrow"
	"github.com/apache/arrow-go/v18/arrow/ipc"
	"github.com/apache/arrow-go/v18/parquet"
	"github.com/apache/arrow-go/v18/parquet/file"

	"trueup/tableio"
)

// The inputs here are invented: a total, regions R1, R2 and stores S1, S2
// (in R1) and S3 (in R2).
var reconcileNodes = [][2]string{{"", ""}, {"R1", ""}, {"R2", ""}, {"R1", "S1"}, {"R1", "S2"}, {"R2", "S3"}}

func writeFile(t *testing.T, dir, name, body string) string {
	t.Helper()
	p := filepath.Join(dir, name)
	if err := os.WriteFile(p, []byte(body), 0o644); err != nil {
		t.Fatal(err)
	}
	return p
}

// baseCSV writes base forecasts for two months; skip drops a node.
func baseCSV(t *testing.T, dir string, skip int, edit func(i, k int, v string) string) string {
	var b strings.Builder
	b.WriteString("region,store,period,base\n")
	base := []float64{100, 62, 35, 30, 28, 36}
	for i, n := range reconcileNodes {
		if i == skip {
			continue
		}
		for k, per := range []string{"2026-01", "2026-02"} {
			v := fmt.Sprint(base[i] + float64(k))
			if edit != nil {
				v = edit(i, k, v)
			}
			fmt.Fprintf(&b, "%s,%s,%s,%s\n", n[0], n[1], per, v)
		}
	}
	return writeFile(t, dir, "base.csv", b.String())
}

// residualCSV writes 12 months of residuals ending 2025-12; store S2
// starts in 2025-04. lastShort makes S3 end a month early.
func residualCSV(t *testing.T, dir string, lastShort bool) string {
	var b strings.Builder
	b.WriteString("region,store,period,residual\n")
	for i, n := range reconcileNodes {
		for m := 1; m <= 12; m++ {
			if i == 4 && m < 4 || lastShort && i == 5 && m == 12 {
				continue
			}
			v := math.Sin(float64(3*i+m)) * float64(1+i%3)
			fmt.Fprintf(&b, "%s,%s,2025-%02d,%g\n", n[0], n[1], m, v)
		}
	}
	name := "res.csv"
	if lastShort {
		name = "res-short.csv"
	}
	return writeFile(t, dir, name, b.String())
}

func readForecasts(t *testing.T, path string) map[string][]float64 {
	t.Helper()
	tb, err := tableio.ReadTable(path, "")
	if err != nil {
		t.Fatal(err)
	}
	cols := map[string]tableio.Column{}
	for _, c := range tb.Columns {
		cols[c.Name] = c
	}
	out := map[string][]float64{}
	for r := range cols["forecast"].Floats {
		key := cellString(cols["region"], r) + "/" + cellString(cols["store"], r) + "/" + cellString(cols["period"], r)
		row := []float64{cols["base"].Floats[r], cols["forecast"].Floats[r]}
		if c, ok := cols["pi80_lower"]; ok {
			row = append(row, c.Floats[r], cols["pi80_upper"].Floats[r])
		}
		out[key] = row
	}
	return out
}

// TestReconcileCommand runs trueup reconcile end to end and checks that
// the written forecasts are coherent (every aggregate equals the sum of
// its stores, the definition of reconciled forecasts), that bottom-up
// keeps the store base forecasts, and that intervals appear with residuals.
func TestReconcileCommand(t *testing.T) {
	dir := t.TempDir()
	base := baseCSV(t, dir, -1, nil)
	res := residualCSV(t, dir, false)
	for _, method := range []string{"bottom-up", "mint", "top-down-fcst", "middle-out"} {
		out := filepath.Join(dir, method)
		args := []string{"reconcile", "--base", base, "--residuals", res, "--hierarchy", "region,store", "--method", method, "--out", out, "--format", "csv"}
		if method == "middle-out" {
			args = append(args, "--at", "region")
		}
		if code := run(args); code != 0 {
			t.Fatalf("%s exited %d", method, code)
		}
		fc := readForecasts(t, filepath.Join(out, "forecasts.csv"))
		for _, per := range []string{"2026-01", "2026-02"} {
			s1, s2, s3 := fc["R1/S1/"+per], fc["R1/S2/"+per], fc["R2/S3/"+per]
			r1, r2, tot := fc["R1//"+per], fc["R2//"+per], fc["//"+per]
			if math.Abs(r1[1]-(s1[1]+s2[1])) > 1e-9 || math.Abs(r2[1]-s3[1]) > 1e-9 || math.Abs(tot[1]-(r1[1]+r2[1])) > 1e-9 {
				t.Errorf("%s %s: not coherent: total %g R1 %g R2 %g stores %g %g %g", method, per, tot[1], r1[1], r2[1], s1[1], s2[1], s3[1])
			}
			if len(tot) != 4 || !(tot[2] < tot[1] && tot[1] < tot[3]) {
				t.Errorf("%s: no interval around the total: %v", method, tot)
			}
			if method == "bottom-up" && (s1[1] != s1[0] || tot[1] != s1[0]+s2[0]+s3[0]) {
				t.Errorf("bottom-up changed the store forecasts: %v %v", s1, tot)
			}
		}
		// The shrinkage λ weighs mint's projection; the split methods
		// use no W and record none.
		run, err := os.ReadFile(filepath.Join(out, "run.json"))
		if err != nil || strings.Contains(string(run), `"shrinkage"`) != (method == "mint") {
			t.Errorf("%s: λ in run.json only for mint: %v %s", method, err, run)
		}
	}
	// top-down-avg with a history (read as forecast reads its input) where
	// the stores sell 1, 3 and 4 a month: shares 1/8, 3/8, 4/8
	// of the total's base forecast (Gross & Sohl 1990, proportions of the
	// historical averages).
	var hb strings.Builder
	hb.WriteString("region,store,period,value\n")
	for m := 1; m <= 12; m++ {
		fmt.Fprintf(&hb, "R1,S1,2025-%02d,1\nR1,S2,2025-%02d,3\nR2,S3,2025-%02d,4\n", m, m, m)
	}
	hist := writeFile(t, dir, "hist.csv", hb.String())
	out := filepath.Join(dir, "td")
	if code := run([]string{"reconcile", "--base", base, "--history", hist, "--value", "value", "--hierarchy", "region,store", "--method", "top-down-avg", "--out", out, "--format", "csv"}); code != 0 {
		t.Fatalf("top-down-avg exited %d", code)
	}
	fc := readForecasts(t, filepath.Join(out, "forecasts.csv"))
	for store, share := range map[string]float64{"R1/S1": 1.0 / 8, "R1/S2": 3.0 / 8, "R2/S3": 4.0 / 8} {
		if got := fc[store+"/2026-01"][1]; math.Abs(got-100*share) > 1e-9 {
			t.Errorf("top-down-avg %s: %g, want %g", store, got, 100*share)
		}
	}
	// Without residuals: forecasts, no bounds.
	out = filepath.Join(dir, "plain")
	if code := run([]string{"reconcile", "--base", base, "--hierarchy", "region,store", "--method", "mint", "--cov", "structural", "--out", out, "--format", "csv"}); code != 0 {
		t.Fatalf("structural exited %d", code)
	}
	if row := readForecasts(t, filepath.Join(out, "forecasts.csv"))["//2026-01"]; len(row) != 2 {
		t.Errorf("bounds without residuals: %v", row)
	}
}

// TestReconcileInputErrors: each bad input exits 2 with a message that
// names the problem.
func TestReconcileInputErrors(t *testing.T) {
	dir := t.TempDir()
	res := residualCSV(t, dir, false)
	cases := []struct {
		name string
		args func() []string
		want string
	}{
		{"missing node", func() []string { return []string{"--base", baseCSV(t, dir, 1, nil)} }, "region=R1"},
		{"not a node", func() []string {
			p := baseCSV(t, dir, -1, nil)
			f, _ := os.OpenFile(p, os.O_APPEND|os.O_WRONLY, 0)
			fmt.Fprintln(f, ",S1,2026-01,5")
			f.Close()
			return []string{"--base", p}
		}, "not a node"},
		{"NaN base", func() []string {
			return []string{"--base", baseCSV(t, dir, -1, func(i, k int, v string) string {
				if i == 2 && k == 1 {
					return "NaN"
				}
				return v
			})}
		}, "region=R2 base at 2026-02 is missing"},
		{"residual periods differ", func() []string {
			return []string{"--base", baseCSV(t, dir, -1, nil), "--residuals", residualCSV(t, dir, true)}
		}, "residual periods differ"},
		{"sample singular", func() []string {
			return []string{"--base", baseCSV(t, dir, -1, nil), "--residuals", res, "--cov", "sample", "--method", "mint"}
		}, "shrink covariance"},
		{"unknown method", func() []string { return []string{"--base", baseCSV(t, dir, -1, nil), "--method", "best"} }, "bottom-up"},
	}
	for _, tc := range cases {
		args := append([]string{"reconcile", "--hierarchy", "region,store", "--out", filepath.Join(dir, "o")}, tc.args()...)
		stderr := captureStderr(t, func() {
			if code := run(args); code != 2 {
				t.Errorf("%s: exit %d, want 2", tc.name, code)
			}
		})
		if !strings.Contains(stderr, tc.want) {
			t.Errorf("%s: message %q does not mention %q", tc.name, stderr, tc.want)
		}
	}
}

// cellString reads a text cell of a table read back; null is "".
func cellString(c tableio.Column, r int) string {
	if c.Null != nil && c.Null[r] {
		return ""
	}
	return c.Strings[r]
}

// TestReconcileRunRecordAndLambda checks reconcile's run.json: the base
// table's SHA-256 (against Go's crypto/sha256 on the file's bytes), the
// history's first and last period (12 months of residuals, 2025-01 to
// 2025-12) and the season length of months (12); and that the shrinkage
// λ is reported, in run.json and the summary, for --cov shrink only: with
// variance scaling (as with sample, the same code path) nothing is shrunk.
func TestReconcileRunRecordAndLambda(t *testing.T) {
	dir := t.TempDir()
	base := baseCSV(t, dir, -1, nil)
	res := residualCSV(t, dir, false)
	bytes, err := os.ReadFile(base)
	if err != nil {
		t.Fatal(err)
	}
	sum := sha256.Sum256(bytes)
	for _, cov := range []string{"shrink", "variance"} {
		out := filepath.Join(dir, cov)
		var code int
		stdout := captureStdout(t, func() {
			code = run([]string{"reconcile", "--base", base, "--residuals", res, "--hierarchy", "region,store", "--cov", cov, "--out", out, "--format", "csv", "--no-report"})
		})
		if code != 0 {
			t.Fatalf("%s exited %d", cov, code)
		}
		raw, err := os.ReadFile(filepath.Join(out, "run.json"))
		if err != nil {
			t.Fatal(err)
		}
		var rec struct {
			Input struct {
				SHA256 string `json:"sha256"`
			} `json:"input"`
			Counts struct {
				First    string `json:"first_period"`
				Last     string `json:"last_period"`
				Seasonal int    `json:"season_length"`
			} `json:"counts"`
			Reconcile struct {
				Notes map[string]float64 `json:"notes"`
			} `json:"reconcile"`
		}
		if err := json.Unmarshal(raw, &rec); err != nil {
			t.Fatal(err)
		}
		if rec.Input.SHA256 != hex.EncodeToString(sum[:]) {
			t.Errorf("%s: input sha256 %q, want %x", cov, rec.Input.SHA256, sum)
		}
		if rec.Counts.First != "2025-01" || rec.Counts.Last != "2025-12" || rec.Counts.Seasonal != 12 {
			t.Errorf("%s: history %q to %q, season length %d; want 2025-01 to 2025-12, 12", cov, rec.Counts.First, rec.Counts.Last, rec.Counts.Seasonal)
		}
		_, noted := rec.Reconcile.Notes["shrinkage"]
		printed := strings.Contains(stdout, "shrinkage intensity")
		if want := cov == "shrink"; noted != want || printed != want {
			t.Errorf("--cov %s: shrinkage in run.json %v, in the summary %v; want %v", cov, noted, printed, want)
		}
		// The default intervals take their z from the residuals' quantiles,
		// and the summary says so, as forecast's does.
		if !strings.Contains(stdout, "quantiles of the reconciled forecasts' past one-step errors (total: 80% ×") {
			t.Errorf("--cov %s: the summary does not say how the intervals were made:\n%s", cov, stdout)
		}
	}
}

// captureStdout runs f with os.Stdout redirected and returns what it wrote.
func captureStdout(t *testing.T, f func()) string {
	t.Helper()
	r, w, err := os.Pipe()
	if err != nil {
		t.Fatal(err)
	}
	done := make(chan []byte)
	go func() {
		b, _ := io.ReadAll(r)
		done <- b
	}()
	old := os.Stdout
	os.Stdout = w
	f()
	os.Stdout = old
	w.Close()
	return string(<-done)
}

// TestReconcileLocks runs reconcile with a lock table: the locked total
// comes out exactly, with a zero-width interval, the summary says so and
// run.json lists the lock; contradictory locks (the total locked to other than the sum of
// both its locked regions) exit 2 naming the table and the nodes, and
// write nothing.
func TestReconcileLocks(t *testing.T) {
	dir := t.TempDir()
	base, res := baseCSV(t, dir, -1, nil), residualCSV(t, dir, false)
	locks := writeFile(t, dir, "locks.csv", "region,store,period,value\n,,2026-02-01,120\n")
	out := filepath.Join(dir, "out")
	stdout := captureStdout(t, func() {
		if code := run([]string{"reconcile", "--base", base, "--residuals", res, "--nest", "region,store", "--lock", locks, "--out", out, "--format", "csv", "--no-report", "--quiet"}); code != 0 {
			t.Fatalf("exit %d", code)
		}
	})
	if !strings.Contains(stdout, "Locked forecasts: 1, from "+locks) {
		t.Errorf("the summary does not say what was locked:\n%s", stdout)
	}
	total := readForecasts(t, filepath.Join(out, "forecasts.csv"))["//2026-02"] // base, forecast, 80% bounds
	if len(total) != 4 || total[1] != 120 || total[2] != 120 || total[3] != 120 {
		t.Errorf("total in 2026-02: base, forecast and 80%% bounds %v; want the forecast locked to 120 with zero width", total)
	}
	var rj struct {
		Locks struct {
			Rows []struct {
				Node, Period string
				Value        float64
			}
		}
	}
	b, err := os.ReadFile(filepath.Join(out, "run.json"))
	if err != nil {
		t.Fatal(err)
	}
	if err := json.Unmarshal(b, &rj); err != nil {
		t.Fatal(err)
	}
	if len(rj.Locks.Rows) != 1 || rj.Locks.Rows[0].Node != "total" || rj.Locks.Rows[0].Period != "2026-02" || rj.Locks.Rows[0].Value != 120 {
		t.Errorf("run.json's locks: %+v", rj.Locks.Rows)
	}

	bad := writeFile(t, dir, "bad.csv", "region,store,period,value\n,,2026-01,100\nR1,,2026-01,60\nR2,,2026-01,30\n")
	out2 := filepath.Join(dir, "out2")
	stderr := captureStderr(t, func() {
		if code := run([]string{"reconcile", "--base", base, "--residuals", res, "--nest", "region,store", "--lock", bad, "--out", out2, "--quiet"}); code != 2 {
			t.Errorf("contradictory locks: exit %d, want 2", code)
		}
	})
	for _, want := range []string{bad, "2026-01", "total is locked to 100", "region=R1 (60)", "region=R2 (30)", "fix it at 90"} {
		if !strings.Contains(stderr, want) {
			t.Errorf("%q does not say %q", stderr, want)
		}
	}
	if _, err := os.Stat(out2); !os.IsNotExist(err) {
		t.Errorf("contradictory locks left %s behind (%v)", out2, err)
	}
}

// TestLockedColumn: the forecasts table marks the locked rows, in every
// output format: locked is true exactly at the two locks given (the total
// in 2026-02, store S1 in 2026-01), whose forecasts are the locked values,
// and false at every other row; Parquet stores it as BOOLEAN, Arrow as
// bool, CSV as true/false.
func TestLockedColumn(t *testing.T) {
	dir := t.TempDir()
	base, res := baseCSV(t, dir, -1, nil), residualCSV(t, dir, false)
	locks := writeFile(t, dir, "locks.csv", "region,store,period,value\n,,2026-02-01,120\nR1,S1,2026-01-01,10\n")
	out := filepath.Join(dir, "out")
	if code := run([]string{"reconcile", "--base", base, "--residuals", res, "--hierarchy", "region,store", "--lock", locks, "--out", out, "--format", "csv,parquet,arrow", "--no-report", "--quiet"}); code != 0 {
		t.Fatalf("exit %d", code)
	}
	want := map[string]float64{"//2026-02": 120, "R1/S1/2026-01": 10}
	for _, name := range []string{"forecasts.csv", "forecasts.parquet", "forecasts.arrow"} {
		tb, err := tableio.ReadTable(filepath.Join(out, name), "")
		if err != nil {
			t.Fatal(err)
		}
		cols := map[string]tableio.Column{}
		for _, c := range tb.Columns {
			cols[c.Name] = c
		}
		locked, ok := cols["locked"]
		if !ok {
			t.Fatalf("%s has no locked column", name)
		}
		rows := 0
		for r := range cols["forecast"].Floats {
			rows++
			key := cellString(cols["region"], r) + "/" + cellString(cols["store"], r) + "/" + cellString(cols["period"], r)
			v, isLocked := want[key]
			if got := cellString(locked, r); got != fmt.Sprint(isLocked) {
				t.Errorf("%s, %s: locked %q, want %v", name, key, got, isLocked)
			}
			if fc := cols["forecast"].Floats[r]; isLocked && fc != v {
				t.Errorf("%s, %s: forecast %g, want the locked %g", name, key, fc, v)
			}
		}
		if rows != len(reconcileNodes)*2 {
			t.Errorf("%s: %d rows, want %d", name, rows, len(reconcileNodes)*2)
		}
	}
	pf, err := file.OpenParquetFile(filepath.Join(out, "forecasts.parquet"), false)
	if err != nil {
		t.Fatal(err)
	}
	defer pf.Close()
	sc := pf.MetaData().Schema
	if i := sc.ColumnIndexByName("locked"); i < 0 || sc.Column(i).PhysicalType() != parquet.Types.Boolean {
		t.Errorf("the Parquet locked column is not BOOLEAN (column %d)", i)
	}
	af, err := os.Open(filepath.Join(out, "forecasts.arrow"))
	if err != nil {
		t.Fatal(err)
	}
	defer af.Close()
	ar, err := ipc.NewFileReader(af)
	if err != nil {
		t.Fatal(err)
	}
	defer ar.Close()
	if fs := ar.Schema().FieldIndices("locked"); len(fs) != 1 || ar.Schema().Field(fs[0]).Type.ID() != arrow.BOOL {
		t.Errorf("the Arrow locked column is not bool (%v)", fs)
	}
}
