package report

import (
	"bytes"
	"compress/gzip"
	"context"
	"encoding/base64"
	"encoding/binary"
	"encoding/json"
	"io"
	"math"
	"os"
	"path/filepath"
	"regexp"
	"slices"
	"strconv"
	"strings"
	"testing"

	"trueup/engine"
	"trueup/engine/output"
	"trueup/fixtures"
	"trueup/internal/numeric"
	"trueup/models/families"
	"trueup/tableio"
)

// forecastDemo runs the demo chain (an invented retail chain) through the
// engine with the given model spec, with plan totals by quarter and
// year: the zero spec is the demo's own automatic choice.
func forecastDemo(t testing.TB, spec families.Spec) *engine.Result {
	t.Helper()
	res, err := engine.Forecast(context.Background(), demoData(t), engine.Options{Model: spec, Fitter: engine.Local{Workers: 2},
		PlanGrains: []tableio.Grain{tableio.Quarter, tableio.Year}})
	if err != nil {
		t.Fatal(err)
	}
	return res
}

// demoData loads the demo chain's monthly sales.
func demoData(t testing.TB) *engine.Data {
	t.Helper()
	path := filepath.Join(t.TempDir(), "demo_sales.parquet")
	if err := os.WriteFile(path, fixtures.DemoMonthlyParquet, 0o644); err != nil {
		t.Fatal(err)
	}
	data, err := engine.Load(engine.Source{Path: path, Time: fixtures.DemoTimeColumn,
		Value: fixtures.DemoValueColumn, Chains: fixtures.DemoChains()})
	if err != nil {
		t.Fatal(err)
	}
	return data
}

func sameFloat32(got float32, want float64) bool {
	if math.IsNaN(want) {
		return math.IsNaN(float64(got))
	}
	return got == float32(want)
}

// TestEmbeddedDataEqualTables checks every number the report embeds
// against the tables engine/output writes: forecasts, bounds and history
// cell by cell, models column by column, and the residual ACF against the
// models table's Ljung–Box Q (Q recomputed from the embedded ACF must
// match the engine's, which was computed from the fits, not the table).
func TestEmbeddedDataEqualTables(t *testing.T) {
	res := forecastDemo(t, families.Spec{Family: "seasonal-naive"})
	in, err := FromResult(res, "")
	if err != nil {
		t.Fatal(err)
	}
	d, err := build(in)
	if err != nil {
		t.Fatal(err)
	}
	m, s := &d.Meta, &d.Series
	if len(m.Nodes) != len(res.Structure.Nodes) || len(m.Forecast) != res.Horizon || len(m.History) != res.Calendar.T {
		t.Fatalf("%d nodes, %d forecast and %d history periods; want %d, %d, %d",
			len(m.Nodes), len(m.Forecast), len(m.History), len(res.Structure.Nodes), res.Horizon, res.Calendar.T)
	}
	h := res.Horizon
	fc := in.Tables["forecasts"]
	for r := 0; r < numRows(fc); r++ {
		i, k := r/h, r%h // forecasts are written node by node, step by step
		if m.Forecast[k] != cell(column(fc, "period"), r) {
			t.Fatalf("row %d: period %s, embedded %s", r, cell(column(fc, "period"), r), m.Forecast[k])
		}
		for name, f := range map[string][]float32{"base": s.Base, "forecast": s.Forecast} {
			if want := number(column(fc, name), r); !sameFloat32(f[i*h+k], want) {
				t.Fatalf("forecasts row %d %s: embedded %v, table %v", r, name, f[i*h+k], want)
			}
		}
		for l, label := range m.Intervals {
			lo, hi := pageBounds(d, l, i*h+k)
			for _, c := range []struct {
				name      string
				got, want float64
			}{{"pi" + label + "_lower", lo, number(column(fc, "pi"+label+"_lower"), r)},
				{"pi" + label + "_upper", hi, number(column(fc, "pi"+label+"_upper"), r)}} {
				// float32 precision of forecast and sd, which the page subtracts
				scale := math.Abs(number(column(fc, "forecast"), r)) + math.Abs(number(column(fc, "pi"+label+"_upper"), r))
				if math.Abs(c.got-c.want) > 1e-6*math.Max(1, scale) {
					t.Fatalf("forecasts row %d %s: the page draws %v, table %v", r, c.name, c.got, c.want)
				}
			}
		}
	}
	if m.Z == nil {
		t.Fatal("the demo's Gaussian bounds were not embedded as standard deviations")
	}
	if got := strings.Join(m.Intervals, ","); got != "80,95" {
		t.Fatalf("intervals %s", got)
	}
	hist := in.Tables["history"]
	for r := 0; r < numRows(hist); r++ {
		if want := number(column(hist, "value"), r); !sameFloat32(s.History[r], want) {
			t.Fatalf("history row %d: embedded %v, table %v", r, s.History[r], want)
		}
	}
	models := in.Tables["models"]
	checked := 0
	for i, nd := range m.Nodes {
		if nd.Family != cell(column(models, "family"), i) || nd.Spec != cell(column(models, "model"), i) || nd.Status != cell(column(models, "status"), i) ||
			nd.Params != cell(column(models, "params"), i) || nd.Warning != cell(column(models, "warning"), i) {
			t.Fatalf("node %d: model %q %q differs from the models table", i, nd.Family, nd.Spec)
		}
		wantP := number(column(models, "ljung_box_p"), i)
		if (nd.LBP == nil) != math.IsNaN(wantP) || nd.LBP != nil && *nd.LBP != wantP {
			t.Fatalf("node %d: Ljung–Box p %v, table %v", i, nd.LBP, wantP)
		}
		if nd.LBP == nil {
			continue
		}
		acf := make([]float64, nd.LBLags)
		for k := range acf {
			acf[k] = float64(s.ACF[i*m.Lags+k])
		}
		q, _ := numeric.LjungBox(acf, nd.NResid, 0)
		if math.Abs(q-*nd.LBQ) > 1e-4*math.Max(1, *nd.LBQ) {
			t.Fatalf("node %d: Q from the embedded ACF %v, models table %v", i, q, *nd.LBQ)
		}
		checked++
	}
	if checked < len(m.Nodes)/2 {
		t.Fatalf("only %d of %d nodes had a Ljung–Box test", checked, len(m.Nodes))
	}
	// Levels list their nodes largest first, by total history.
	for _, lv := range m.Levels {
		for j := 1; j < len(lv.Nodes); j++ {
			if m.Nodes[lv.Nodes[j]].Volume > m.Nodes[lv.Nodes[j-1]].Volume {
				t.Fatalf("level %s is not sorted by volume", lv.Name)
			}
		}
	}
}

// pageBounds computes interval l's bounds at position j (node × step) as
// the page script does: from the embedded bounds, or forecast ∓ z·sd.
func pageBounds(d *Data, l, j int) (lo, hi float64) {
	s := &d.Series
	if d.Meta.Z == nil {
		return float64(s.Lower[l][j]), float64(s.Upper[l][j])
	}
	f, sd, z := float64(s.Forecast[j]), float64(s.SD[j]), d.Meta.Z[d.Meta.Nodes[j/len(d.Meta.Forecast)].Level][l]
	lo, hi = f-z*sd, f+z*sd
	if d.Meta.ClampAtZero {
		lo = math.Max(0, lo)
	}
	return lo, hi
}

// TestOtherBoundsKeptAsTheyAre changes one bound so that the bounds are
// no longer forecast ∓ z·sd and checks that the report then embeds the
// bounds themselves.
func TestOtherBoundsKeptAsTheyAre(t *testing.T) {
	res := forecastDemo(t, families.Spec{Family: "drift"})
	in, err := FromResult(res, "")
	if err != nil {
		t.Fatal(err)
	}
	hi := column(in.Tables["forecasts"], "pi80_upper")
	hi.Floats[5] *= 1.01
	d, err := build(in)
	if err != nil {
		t.Fatal(err)
	}
	if d.Meta.Z != nil || d.Series.SD != nil || len(d.Series.Upper) != 2 {
		t.Fatal("bounds that are not Gaussian were replaced by standard deviations")
	}
	if got := d.Series.Upper[0][5]; !sameFloat32(got, hi.Floats[5]) {
		t.Fatalf("embedded bound %v, table %v", got, hi.Floats[5])
	}
}

// TestPageCarriesTheData renders the page and decodes its embedded data
// as the page script does (base64, gzip, byte planes), and checks that it
// loads nothing from elsewhere.
func TestPageCarriesTheData(t *testing.T) {
	res := forecastDemo(t, families.Spec{Family: "drift"})
	in, err := FromResult(res, "")
	if err != nil {
		t.Fatal(err)
	}
	var buf bytes.Buffer
	if err := Render(&buf, in); err != nil {
		t.Fatal(err)
	}
	page := buf.String()
	if ext := regexp.MustCompile(`(?i)(src|href)\s*=|@import|url\(`).FindString(page); ext != "" {
		t.Fatalf("the page refers to an outside resource: %q", ext)
	}
	if !strings.Contains(page, "forecasts are estimates") {
		t.Fatal("the page lacks the caution that forecasts are estimates")
	}
	block := func(id string) []byte {
		re := regexp.MustCompile(`<script type="application/octet-stream" id="` + id + `">([^<]*)</script>`)
		mt := re.FindStringSubmatch(page)
		if mt == nil {
			t.Fatalf("no %s block", id)
		}
		b, err := base64.StdEncoding.DecodeString(mt[1])
		if err != nil {
			t.Fatal(err)
		}
		zr, err := gzip.NewReader(bytes.NewReader(b))
		if err != nil {
			t.Fatal(err)
		}
		out, err := io.ReadAll(zr)
		if err != nil {
			t.Fatal(err)
		}
		return out
	}
	var meta Meta
	if err := json.Unmarshal(block("meta"), &meta); err != nil {
		t.Fatal(err)
	}
	raw := block("series")
	n := len(raw) / 4
	want, _ := build(in)
	var flat []float32
	for _, f := range want.Series.fields() {
		flat = append(flat, f...)
	}
	if n != len(flat) || len(meta.Nodes) != len(want.Meta.Nodes) {
		t.Fatalf("decoded %d values and %d nodes, want %d and %d", n, len(meta.Nodes), len(flat), len(want.Meta.Nodes))
	}
	for i := 0; i < n; i++ {
		v := math.Float32frombits(binary.LittleEndian.Uint32([]byte{raw[i], raw[n+i], raw[2*n+i], raw[3*n+i]}))
		if math.Float32bits(v) != math.Float32bits(flat[i]) {
			t.Fatalf("value %d decodes to %v, want %v", i, v, flat[i])
		}
	}
}

// TestFromDirEqualsResult writes a run's tables as CSV and as Parquet and
// checks that the report rendered from either folder equals the one
// written with the run.
func TestFromDirEqualsResult(t *testing.T) {
	res := forecastDemo(t, families.Spec{Family: "drift"})
	fromRes, err := FromResult(res, "")
	if err != nil {
		t.Fatal(err)
	}
	want, err := build(fromRes)
	if err != nil {
		t.Fatal(err)
	}
	for _, format := range []string{"csv", "parquet"} {
		dir := t.TempDir()
		if _, err := output.Write(dir, res, []string{format, "report"}); err != nil {
			t.Fatal(err)
		}
		if _, err := os.Stat(filepath.Join(dir, FileName)); err != nil {
			t.Fatalf("%s: the report writer wrote no %s: %v", format, FileName, err)
		}
		in, err := FromDir(dir)
		if err != nil {
			t.Fatal(err)
		}
		got, err := build(in)
		if err != nil {
			t.Fatal(err)
		}
		a, _ := json.Marshal(got.Meta.Nodes)
		b, _ := json.Marshal(want.Meta.Nodes)
		if !bytes.Equal(a, b) {
			t.Fatalf("%s: nodes differ from the run's", format)
		}
		gf, wf := got.Series.fields(), want.Series.fields()
		for j := range wf {
			for i := range wf[j] {
				if math.Float32bits(gf[j][i]) != math.Float32bits(wf[j][i]) {
					t.Fatalf("%s: field %d value %d: %v from the folder, %v from the run", format, j, i, gf[j][i], wf[j][i])
				}
			}
		}
	}
}

// TestFromDirNeedsForecasts checks the error for a folder that is not a
// run's output.
func TestFromDirNeedsForecasts(t *testing.T) {
	dir := t.TempDir()
	if _, err := FromDir(dir); err == nil || !strings.Contains(err.Error(), "run.json") {
		t.Fatalf("err = %v, want one naming run.json", err)
	}
	if err := os.WriteFile(filepath.Join(dir, "run.json"), []byte("{}"), 0o644); err != nil {
		t.Fatal(err)
	}
	if _, err := FromDir(dir); err == nil || !strings.Contains(err.Error(), "forecasts") {
		t.Fatalf("err = %v, want one naming the forecasts table", err)
	}
}

// accuracyFolder writes tables with the backtest's names and columns
// (accuracy.go) into dir: invented numbers, for checks of what is
// carried and drawn, never of how accuracy is computed.
func accuracyFolder(t testing.TB, dir string) {
	t.Helper()
	accuracyFolderNamed(t, dir, [4]string{"parent_level", "parent", "child_level", "child"})
}

// accuracyFolderNamed is accuracyFolder with the drivers' parent level,
// parent, child level and child columns named as given.
func accuracyFolderNamed(t testing.TB, dir string, names [4]string) {
	t.Helper()
	nan := math.NaN()
	scores := &tableio.Table{Columns: []tableio.Column{
		{Name: "level", Type: tableio.String, Strings: []string{"", "", "total", "total", "region", "region", "total"}, Null: []bool{true, true, false, false, false, false, false}},
		{Name: "method", Type: tableio.String, Strings: []string{"mint", "bottom-up", "mint", "bottom-up", "mint", "bottom-up", "mint"}},
		{Name: "step", Type: tableio.Int64, Ints: []int64{0, 0, 0, 0, 0, 0, 1}, Null: []bool{true, true, true, true, true, true, false}},
		{Name: "count", Type: tableio.Int64, Ints: []int64{0, 0, 36, 36, 180, 180, 3}},
		{Name: "mase", Type: tableio.Float64, Floats: []float64{0.8, 0.9, 0.7, 0.75, 0.9, 1.05, 0.6}},
		{Name: "rmsse", Type: tableio.Float64, Floats: []float64{0.9, 1.0, 0.8, 0.85, 1.0, 1.1, 0.7}},
		{Name: "bias", Type: tableio.Float64, Floats: []float64{-10, 20, -30, 40, -5, 6, nan}},
		{Name: "coverage_80", Type: tableio.Float64, Floats: []float64{0.78, 0.7, 0.8, 0.72, 0.76, 0.68, 1}},
		{Name: "coverage_95", Type: tableio.Float64, Floats: []float64{0.93, 0.88, 0.95, 0.9, 0.91, 0.86, 1}},
		{Name: "crps", Type: tableio.Float64, Floats: []float64{0.61, 0.66, 0.52, 0.55, 0.7, 0.77, 0.4}},
		{Name: "energy_score", Type: tableio.Float64, Floats: []float64{3.2, 3.5, nan, nan, nan, nan, nan}},
	}}
	var rank []int64
	var anc, node []string
	var share []float64
	for r := 1; r <= 12; r++ {
		rank, anc, node, share = append(rank, int64(r)), append(anc, "total"), append(node, "region=Saltcoast store=Juniperhollow"+strconv.Itoa(r)), append(share, 1/float64(r+1))
	}
	n := len(rank)
	same := func(v string) []string {
		out := make([]string, n)
		for i := range out {
			out[i] = v
		}
		return out
	}
	drivers := &tableio.Table{Columns: []tableio.Column{
		{Name: "method", Type: tableio.String, Strings: same("mint")},
		{Name: names[0], Type: tableio.String, Strings: same("total")},
		{Name: names[1], Type: tableio.String, Strings: anc},
		{Name: names[2], Type: tableio.String, Strings: same("region+store")},
		{Name: names[3], Type: tableio.String, Strings: node},
		{Name: "rank", Type: tableio.Int64, Ints: rank},
		{Name: "abs_error", Type: tableio.Float64, Floats: share},
		{Name: "net_error", Type: tableio.Float64, Floats: share},
		{Name: "share", Type: tableio.Float64, Floats: share},
	}}
	for name, tb := range map[string]*tableio.Table{"scores": scores, "drivers": drivers} {
		if err := tableio.WriteTable(filepath.Join(dir, name+".parquet"), tb, tableio.Parquet); err != nil {
			t.Fatal(err)
		}
	}
}

// TestAccuracyTablesShownWhenPresent checks that the backtest's tables in
// a folder are carried into the report (scores over all steps, the ten
// largest drivers), that none are carried from a folder without them,
// and that a backtest's folder without forecasts gives a report.
func TestAccuracyTablesShownWhenPresent(t *testing.T) {
	res := forecastDemo(t, families.Spec{Family: "drift"})
	dir := t.TempDir()
	accuracyFolder(t, dir)
	in, err := FromResult(res, dir)
	if err != nil {
		t.Fatal(err)
	}
	if len(in.Accuracy) != 2 || in.Accuracy[0].Name != "scores" || in.Accuracy[1].Name != "drivers" {
		t.Fatalf("accuracy tables %+v", in.Accuracy)
	}
	sc, dr := in.Accuracy[0], in.Accuracy[1]
	if len(sc.Rows) != 6 || sc.Rows[0][0] != nil || sc.Rows[2][0] != "total" || sc.Rows[2][4] != 0.7 || sc.Rows[0][6] != -10.0 {
		t.Fatalf("scores carried as %v", sc.Rows)
	}
	if len(dr.Rows) != 10 || dr.Rows[9][4] != "region=Saltcoast store=Juniperhollow10" {
		t.Fatalf("drivers carried as %v", dr.Rows)
	}
	if want := []string{"method", "parent_level", "parent", "child_level", "child", "rank", "abs_error", "net_error", "share"}; !slices.Equal(dr.Columns, want) {
		t.Fatalf("drivers columns %v, want %v", dr.Columns, want)
	}
	if none, _ := FromResult(res, t.TempDir()); len(none.Accuracy) != 0 {
		t.Fatal("accuracy tables from an empty folder")
	}
	if err := os.WriteFile(filepath.Join(dir, "run.json"), []byte(`{"command":"backtest","recommendation":{"method":"mint"}}`), 0o644); err != nil {
		t.Fatal(err)
	}
	only, err := FromDir(dir)
	if err != nil {
		t.Fatal(err)
	}
	var buf bytes.Buffer
	if err := Render(&buf, only); err != nil {
		t.Fatalf("a backtest's folder: %v", err)
	}
	if !strings.Contains(buf.String(), "trueup backtest report") {
		t.Fatal("the backtest's report is not titled as such")
	}
}

// TestOldDriverColumnsRead: a drivers table written before the parent and
// child columns were named so (ancestor_level, ancestor, level, node) is
// read back under the names the page draws.
func TestOldDriverColumnsRead(t *testing.T) {
	dir := t.TempDir()
	accuracyFolderNamed(t, dir, [4]string{"ancestor_level", "ancestor", "level", "node"})
	tables, err := readAccuracy(dir)
	if err != nil {
		t.Fatal(err)
	}
	dr := tables[1]
	if want := []string{"method", "parent_level", "parent", "child_level", "child", "rank", "abs_error", "net_error", "share"}; dr.Name != "drivers" || !slices.Equal(dr.Columns, want) {
		t.Fatalf("%s columns %v, want %v", dr.Name, dr.Columns, want)
	}
	if sc := tables[0]; !slices.Contains(sc.Columns, "level") {
		t.Fatalf("the scores table's level column was renamed: %v", sc.Columns)
	}
}

// TestNodesNamedByTheirLabel: the report names every node as the tables
// and commands do (hierarchy.Label: region=North store=N01, total), from
// the run and from its folder read back. It once wrote "North · N01".
func TestNodesNamedByTheirLabel(t *testing.T) {
	res := forecastDemo(t, families.Spec{Family: "drift"})
	fromRes, err := FromResult(res, "")
	if err != nil {
		t.Fatal(err)
	}
	dir := t.TempDir()
	if _, err := output.Write(dir, res, []string{"csv"}); err != nil {
		t.Fatal(err)
	}
	fromDir, err := FromDir(dir)
	if err != nil {
		t.Fatal(err)
	}
	for _, in := range []*Input{fromRes, fromDir} {
		d, err := build(in)
		if err != nil {
			t.Fatal(err)
		}
		if len(d.Meta.Nodes) != len(res.Structure.Nodes) {
			t.Fatalf("%d nodes, want %d", len(d.Meta.Nodes), len(res.Structure.Nodes))
		}
		// Nodes are in the forecasts table's order, which is the structure's.
		for i, nd := range d.Meta.Nodes {
			if want := res.Structure.Label(i); nd.Label != want {
				t.Fatalf("node %d is named %q, want %q", i, nd.Label, want)
			}
		}
	}
}

// TestPlanTotalsEmbedded checks the plan totals the report carries
// against the result's own (engine.Result.Plans and PlanBounds), to the
// cent, from the run and from its folder read back as CSV.
func TestPlanTotalsEmbedded(t *testing.T) {
	res := forecastDemo(t, families.Spec{Family: "drift"})
	fromRes, err := FromResult(res, "")
	if err != nil {
		t.Fatal(err)
	}
	dir := t.TempDir()
	if _, err := output.Write(dir, res, []string{"csv"}); err != nil {
		t.Fatal(err)
	}
	fromDir, err := FromDir(dir)
	if err != nil {
		t.Fatal(err)
	}
	T := res.Calendar.T
	for _, in := range []*Input{fromRes, fromDir} {
		d, err := build(in)
		if err != nil {
			t.Fatal(err)
		}
		p := d.Meta.Plans
		if p == nil || len(p.Periods) != len(res.Plans.Periods) || len(p.Nodes) != len(res.Structure.Nodes) {
			t.Fatalf("plans embedded: %+v", p)
		}
		near := func(got *float64, want float64) bool {
			return got != nil && math.Abs(*got-want) <= 0.005+1e-12*math.Abs(want)
		}
		for k, pp := range res.Plans.Periods {
			if p.Periods[k] != pp.Period.String() || p.PeriodsActual[k] != pp.ActualPeriods(T) || p.PeriodsForecast[k] != pp.ForecastPeriods(T) {
				t.Errorf("plan period %d: %s %d+%d", k, p.Periods[k], p.PeriodsActual[k], p.PeriodsForecast[k])
			}
		}
		// Nodes are in the forecasts table's order, which is the structure's.
		for i := range res.Structure.Nodes {
			for k := range res.Plans.Periods {
				nd := p.Nodes[i]
				if !near(nd.Actual[k], res.Plans.Actual[i][k]) || !near(nd.Forecast[k], res.Plans.Forecast[i][k]) {
					t.Fatalf("node %d period %d: %v %v, want %v %v", i, k, *nd.Actual[k], *nd.Forecast[k], res.Plans.Actual[i][k], res.Plans.Forecast[i][k])
				}
				for l, lv := range res.Levels {
					lo, hi := res.PlanBounds(i, k, lv)
					if p.Intervals[l] != engine.LevelLabel(lv) || !near(nd.Lower[l][k], lo) || !near(nd.Upper[l][k], hi) {
						t.Fatalf("node %d period %d %v%%: [%v, %v], want [%v, %v]", i, k, lv, *nd.Lower[l][k], *nd.Upper[l][k], lo, hi)
					}
				}
			}
		}
	}
}
