package output_test

import (
	"bytes"
	"context"
	"encoding/json"
	"os"
	"path/filepath"
	"testing"

	"trueup/engine"
	"trueup/engine/output"
	"trueup/fixtures"
	"trueup/models/families"
	"trueup/tableio"
)

// TestBacktestAtOneOriginIsForecastOnTheCutHistory checks that a backtest
// at a single origin is a forecast run on the history before it: the
// forecasts table of each method (and the models and residuals tables)
// equals, byte for byte, the one trueup forecast writes from an input file holding only the rows before the
// origin (the chain opens and closes stores, so the cut decides which
// stores exist and which have closed).
func TestBacktestAtOneOriginIsForecastOnTheCutHistory(t *testing.T) {
	cfg := fixtures.SmallConfig(4)
	table := fixtures.Generate(cfg).Table()
	dir := t.TempDir()
	full := filepath.Join(dir, "full.parquet")
	if err := tableio.WriteTable(full, table, tableio.Parquet); err != nil {
		t.Fatal(err)
	}
	src := engine.Source{Path: full, Time: fixtures.DemoTimeColumn, Value: fixtures.DemoValueColumn, Chains: fixtures.DemoChains()}
	d, err := engine.Load(src)
	if err != nil {
		t.Fatal(err)
	}
	const h = 6
	// The automatic family choice: the origin's choice must be the one a
	// forecast run on the cut history makes.
	opt := engine.Options{Horizon: h, Fitter: engine.Local{Workers: 2}}
	bt, err := engine.Backtest(context.Background(), d, engine.BacktestOptions{Options: opt, Origins: 1,
		Compare: []string{"base", "bottom-up", "mint-shrink", "mint-variance"}})
	if err != nil {
		t.Fatal(err)
	}
	org := bt.Origins[0]

	// The input cut at the origin, as a user would cut the file.
	origin := org.Start.String()
	var keep []int
	for r, p := range table.Columns[0].Strings {
		if p < origin {
			keep = append(keep, r)
		}
	}
	cut := &tableio.Table{}
	for _, c := range table.Columns {
		nc := tableio.Column{Name: c.Name, Type: c.Type}
		for _, r := range keep {
			if c.Type == tableio.String {
				nc.Strings = append(nc.Strings, c.Strings[r])
			} else {
				nc.Floats = append(nc.Floats, c.Floats[r])
			}
		}
		cut.Columns = append(cut.Columns, nc)
	}
	src.Path = filepath.Join(dir, "cut.parquet")
	if err := tableio.WriteTable(src.Path, cut, tableio.Parquet); err != nil {
		t.Fatal(err)
	}
	dc, err := engine.Load(src)
	if err != nil {
		t.Fatal(err)
	}
	if dc.Panel.Stats.EarlyEnds == 0 {
		t.Fatal("the cut history has no closed store; the closure rule is not exercised")
	}
	for _, m := range []struct{ name, method, cov string }{{"bottom-up", "bottom-up", ""}, {"mint-shrink", "mint", "shrink"}, {"mint-variance", "mint", "variance"}} {
		o := opt
		o.Reconcile = engine.Reconciliation{Method: m.method, Cov: m.cov}
		res, err := engine.Forecast(context.Background(), dc, o)
		if err != nil {
			t.Fatal(err)
		}
		a, b := filepath.Join(dir, m.name, "forecast"), filepath.Join(dir, m.name, "backtest")
		if _, err := output.Write(a, res, []string{"parquet"}); err != nil {
			t.Fatal(err)
		}
		if _, err := output.Write(b, org.Results[m.name], []string{"parquet"}); err != nil {
			t.Fatal(err)
		}
		for _, table := range []string{"forecasts", "models", "residuals"} {
			fa, _ := os.ReadFile(filepath.Join(a, table+".parquet"))
			fb, _ := os.ReadFile(filepath.Join(b, table+".parquet"))
			if len(fa) == 0 || !bytes.Equal(fa, fb) {
				t.Errorf("%s: %s differ between forecast on the cut history and the backtest (%d and %d bytes)", m.name, table, len(fa), len(fb))
			}
		}
	}
}

// TestWriteBacktest writes every table in every format, and run.json last
// with the headline.
func TestWriteBacktest(t *testing.T) {
	d := smallChain(t)
	bt, err := engine.Backtest(context.Background(), d, engine.BacktestOptions{
		Options: engine.Options{Model: families.Spec{Family: "drift"}, Horizon: 4}, Origins: 2})
	if err != nil {
		t.Fatal(err)
	}
	dir := t.TempDir()
	files, err := output.WriteBacktest(dir, bt, []string{"parquet", "csv"}, nil)
	if err != nil {
		t.Fatal(err)
	}
	if len(files) != 13 || filepath.Base(files[12]) != "run.json" {
		t.Fatalf("files %v", files)
	}
	var rep struct {
		Headline []struct {
			Method string
			MASE   float64
		}
		Recommendation struct{ Method string }
	}
	data, _ := os.ReadFile(files[12])
	if err := json.Unmarshal(data, &rep); err != nil {
		t.Fatal(err)
	}
	if len(rep.Headline) != 4 || rep.Recommendation.Method == "" {
		t.Errorf("run.json headline %+v, recommendation %+v", rep.Headline, rep.Recommendation)
	}
	for _, f := range files {
		if filepath.Ext(f) == ".json" {
			continue
		}
		back, err := tableio.ReadTable(f, "")
		if err != nil || len(back.Columns) == 0 {
			t.Errorf("%s: %v", f, err)
		}
	}
}

// TestBacktestSameBytesWhateverTheWorkers: every backtest table has the
// same bytes with one worker and with three.
func TestBacktestSameBytesWhateverTheWorkers(t *testing.T) {
	d := smallChain(t)
	var dirs []string
	for _, workers := range []int{1, 3} {
		bt, err := engine.Backtest(context.Background(), d, engine.BacktestOptions{
			Options: engine.Options{Horizon: 4, Model: families.Spec{Family: "ets"}, Fitter: engine.Local{Workers: workers}},
			Origins: 2, Every: 3})
		if err != nil {
			t.Fatal(err)
		}
		dir := t.TempDir()
		if _, err := output.WriteBacktest(dir, bt, []string{"csv", "parquet"}, nil); err != nil {
			t.Fatal(err)
		}
		dirs = append(dirs, dir)
	}
	files, _ := filepath.Glob(filepath.Join(dirs[0], "*.*"))
	for _, f := range files {
		if filepath.Base(f) == "run.json" {
			continue
		}
		a, _ := os.ReadFile(f)
		b, _ := os.ReadFile(filepath.Join(dirs[1], filepath.Base(f)))
		if !bytes.Equal(a, b) {
			t.Errorf("%s differs between 1 and 3 workers", filepath.Base(f))
		}
	}
	if len(files) != 13 {
		t.Errorf("%d files", len(files))
	}
}

// TestWriteBacktestWithoutBase: without base there is no comparison with
// it, and run.json says null rather than failing on NaN.
func TestWriteBacktestWithoutBase(t *testing.T) {
	d := smallChain(t)
	bt, err := engine.Backtest(context.Background(), d, engine.BacktestOptions{
		Options: engine.Options{Model: families.Spec{Family: "drift"}, Horizon: 4}, Origins: 1,
		Compare: []string{"bottom-up", "mint-shrink"}})
	if err != nil {
		t.Fatal(err)
	}
	files, err := output.WriteBacktest(t.TempDir(), bt, []string{"csv"}, nil)
	if err != nil {
		t.Fatal(err)
	}
	data, _ := os.ReadFile(files[len(files)-1])
	if !bytes.Contains(data, []byte(`"versus_base_percent": null`)) {
		t.Errorf("run.json does not say versus_base_percent null")
	}
}
