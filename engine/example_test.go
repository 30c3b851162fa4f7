package engine_test

import (
	"context"
	"fmt"
	"log"
	"math"
	"os"
	"path/filepath"

	"trueup/engine"
	"trueup/fixtures"
	"trueup/models/families"
)

// loadDemo writes the built-in demo chain (an invented retail chain:
// regions, stores, categories) to a temporary file and loads it, as a user
// loads a sales table; done removes the file.
func loadDemo() (data *engine.Data, done func()) {
	dir, err := os.MkdirTemp("", "trueup-example")
	if err != nil {
		log.Fatal(err)
	}
	path := filepath.Join(dir, "sales.parquet")
	if err := os.WriteFile(path, fixtures.DemoMonthlyParquet, 0o644); err != nil {
		log.Fatal(err)
	}
	data, err = engine.Load(engine.Source{Path: path, Time: "period", Value: "sales",
		Chains: fixtures.DemoChains()})
	if err != nil {
		log.Fatal(err)
	}
	return data, func() { os.RemoveAll(dir) }
}

// ExampleForecast forecasts the built-in demo chain (an invented retail
// chain: regions, stores, categories) and checks the promise trueup makes:
// every total equals the sum of its parts. The drift family keeps the
// example fast; the zero Options would choose a model per node.
func ExampleForecast() {
	data, done := loadDemo()
	defer done()
	res, err := engine.Forecast(context.Background(), data, engine.Options{
		Model:   families.Spec{Family: "drift"},
		Horizon: 3,
	})
	if err != nil {
		log.Fatal(err)
	}

	st := res.Structure
	for _, l := range st.Levels {
		fmt.Printf("%-22s %3d nodes\n", l.Name, len(l.Nodes))
	}
	fmt.Println("forecasts from", res.ForecastPeriod(0), "with", res.Report.Reconcile.Method)
	var sum float64
	for j := st.BottomOffset(); j < len(st.Nodes); j++ {
		sum += res.Solution.Forecast[j][0]
	}
	total := res.Solution.Forecast[0][0]
	fmt.Println("total equals the sum of its bottom series:", math.Abs(total-sum) < 1e-6*total)
	// Output:
	// total                    1 nodes
	// category                 8 nodes
	// region                   5 nodes
	// region+category         40 nodes
	// region+store            28 nodes
	// region+store+category  224 nodes
	// forecasts from 2026-01 with mint
	// total equals the sum of its bottom series: true
}

// ExampleBacktest replays the demo chain at three past origins, scores
// the base forecasts and two reconciliations of the same fits, and names
// the method with the best mean MASE over levels. The drift family keeps
// the example fast.
func ExampleBacktest() {
	data, done := loadDemo()
	defer done()
	bt, err := engine.Backtest(context.Background(), data, engine.BacktestOptions{
		Options: engine.Options{Model: families.Spec{Family: "drift"}, Horizon: 6},
		Origins: 3,
		Compare: []string{"base", "bottom-up", "mint-shrink"},
	})
	if err != nil {
		log.Fatal(err)
	}
	for _, h := range bt.Headline {
		fmt.Printf("%-12s MASE %.2f\n", h.Method, h.MASE)
	}
	fmt.Println("recommended:", bt.Recommendation.Method)
	// Output:
	// base         MASE 4.14
	// bottom-up    MASE 4.14
	// mint-shrink  MASE 4.13
	// recommended: mint-shrink
}
