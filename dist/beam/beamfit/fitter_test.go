package beamfit

import (
	"context"
	"fmt"
	"path/filepath"
	"testing"

	"github.com/apache/beam/sdks/v2/go/pkg/beam"
	"github.com/apache/beam/sdks/v2/go/pkg/beam/core/graph"
	"github.com/apache/beam/sdks/v2/go/pkg/beam/x/beamx"

	"trueup/engine"
	"trueup/fixtures"
	"trueup/models/families"
)

func TestMain(m *testing.M) {
	beam.Init()
	m.Run()
}

// The Beam fit stage, on prism in this process, gives the fits
// engine.Local gives for the same jobs (the demo chain's nodes, ARIMA's
// automatic order choice), through an exchange folder given by name and
// in job files of a few jobs each, so that the jobs are spread over
// several files and bundles.
func TestFitterMatchesLocal(t *testing.T) {
	data, err := engine.Load(engine.Source{Path: "../../../fixtures/demo/chain_monthly.csv",
		Time: fixtures.DemoTimeColumn, Value: fixtures.DemoValueColumn, Chains: fixtures.DemoChains()})
	if err != nil {
		t.Fatal(err)
	}
	exchange := t.TempDir()
	compared := 0
	compare := engine.FitterFunc(func(ctx context.Context, jobs []engine.FitJob, _ func(int, int)) ([]engine.NodeFit, error) {
		jobs = jobs[:min(len(jobs), 60)]
		want, err := engine.Local{Workers: 2}.Fit(ctx, jobs, nil)
		if err != nil {
			return nil, err
		}
		got, err := Fitter{Run: beamx.Run, Exchange: exchange, ShardJobs: 7, Workers: 2}.Fit(ctx, jobs, nil)
		if err != nil {
			return nil, err
		}
		for i := range want {
			if g, w := fitText(got[i]), fitText(want[i]); g != w {
				t.Errorf("job %d (node %d):\nbeam  %s\nlocal %s", i, jobs[i].Node, g, w)
			}
		}
		compared = len(want)
		return nil, fmt.Errorf("compared") // stops the forecast: only the fits matter here
	})
	_, err = engine.Forecast(context.Background(), data, engine.Options{Model: families.Spec{Family: "arima"}, Fitter: compare})
	if compared == 0 {
		t.Fatalf("no fits compared: %v", err)
	}
	if entries, _ := filepath.Glob(filepath.Join(exchange, "*")); len(entries) != 0 {
		t.Errorf("the exchange folder keeps %v", entries)
	}
}

// No jobs: no pipeline, no fits.
func TestFitterNoJobs(t *testing.T) {
	fits, err := Fitter{Run: beamx.Run}.Fit(context.Background(), nil, nil)
	if err != nil || len(fits) != 0 {
		t.Errorf("got %v, %v", fits, err)
	}
}

// The fit stage's output leads to a grouping (here a combine), which a
// runner never fuses into the stage, so the stage has an output that is
// read outside it and prism waits for its bundles blocked, not in the
// busy loop it uses for a stage with none (see pipeline).
func TestFitStageOutputLeadsToAGrouping(t *testing.T) {
	edges, _, err := pipeline([]string{"a", "b"}, "fits", 2).Build()
	if err != nil {
		t.Fatal(err)
	}
	var fit *graph.MultiEdge
	for _, e := range edges {
		if e.Op == graph.ParDo {
			if _, ok := e.DoFn.Recv.(*fitShard); ok {
				fit = e
			}
		}
	}
	if fit == nil || len(fit.Output) != 1 {
		t.Fatalf("no fit ParDo with one output in %v", edges)
	}
	// Follow the fit's output through the transforms that read it.
	reached := map[*graph.Node]bool{fit.Output[0].To: true}
	for grew := true; grew; {
		grew = false
		for _, e := range edges {
			if len(e.Input) == 0 || !reached[e.Input[0].From] {
				continue
			}
			if e.Op == graph.Combine || e.Op == graph.CoGBK {
				return
			}
			for _, out := range e.Output {
				if !reached[out.To] {
					reached[out.To], grew = true, true
				}
			}
		}
	}
	t.Errorf("the fit stage's output reaches no grouping")
}

// fitText writes a fit out in full, its path form followed through its
// pointers by pathText (so that two fits compare by content, not by
// address; %#v, not reflect.DeepEqual, so that NaN residuals compare equal).
func fitText(fit engine.NodeFit) string {
	path := fit.Path
	fit.Path = nil
	return fmt.Sprintf("%#v path %s", fit, pathText(path))
}
