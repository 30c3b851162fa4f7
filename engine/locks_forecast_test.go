package engine_test

import (
	"context"
	"os"
	"path/filepath"
	"strings"
	"testing"

	"trueup/engine"
	"trueup/inputerr"
)

// TestForecastChecksLocksBeforeFitting: a lock table that cannot be met
// (a key that is no node, a parent below its locked part with
// non-negative forecasts), a method without weights and the automatic
// choice of method are refused as input errors naming the lock option or
// table before any node is fitted (the fitter fails the test if called).
func TestForecastChecksLocksBeforeFitting(t *testing.T) {
	d := chain(t, 4)
	region := d.Structure.Nodes[d.Structure.Levels[1].Nodes[0]].Key
	first := d.Panel.Period(d.Panel.T).String()
	row := func(key []string, v string) string {
		return strings.Join(key, ",") + "," + first + "," + v + "\n"
	}
	header := strings.Join(d.Structure.Attrs, ",") + ",period,value\n"
	total := make([]string, len(d.Structure.Attrs))
	noFit := engine.FitterFunc(func(context.Context, []engine.FitJob, func(int, int)) ([]engine.NodeFit, error) {
		t.Error("a node was fitted before the locks were refused")
		return nil, context.Canceled
	})
	dir := t.TempDir()
	write := func(name, body string) string {
		p := filepath.Join(dir, name)
		if err := os.WriteFile(p, []byte(body), 0o644); err != nil {
			t.Fatal(err)
		}
		return p
	}
	bad := append([]string(nil), total...)
	bad[0] = "Nowhere"
	for _, c := range []struct {
		name, method, table string
		want                []string
	}{
		{"no such node", "", write("a.csv", header+row(bad, "5")), []string{"a.csv", "not a node"}},
		{"below its locked part", "", write("b.csv", header+row(total, "5")+row(region, "10")), []string{"b.csv", "total is locked to 5", "(10)"}},
		{"bottom-up", "bottom-up", write("c.csv", header+row(total, "5")), []string{"mint", "bottom-up"}},
		{"automatic choice", engine.AutoMethod, write("d.csv", header+row(total, "5")), []string{"automatic choice", "mint"}},
	} {
		_, err := engine.Forecast(context.Background(), d, engine.Options{Fitter: noFit,
			Reconcile: engine.Reconciliation{Method: c.method, Locks: c.table}})
		if err == nil || !inputerr.Is(err) {
			t.Errorf("%s: got %v, want an input error", c.name, err)
			continue
		}
		for _, w := range c.want {
			if !strings.Contains(err.Error(), w) {
				t.Errorf("%s: %q does not say %q", c.name, err, w)
			}
		}
	}
}
