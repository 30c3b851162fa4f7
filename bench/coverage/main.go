// Command coverage measures how often reconciled prediction intervals
// contain what happened, on a public hierarchy: the monthly home sales of
// the 26 Texas cities with complete data in R's ggplot2 txhousing table
// (exported by fixtures/reference/accuracy/export.R) and their total, a
// two-level structure of 27 nodes. It runs trueup's rolling-origin
// backtest (engine.Backtest: the automatic model choice at every node, the
// default compared methods, horizon 12) and prints, per method and level,
// the MASE and the share of actuals inside the 80% and 95% intervals. With
// -demo it does the same on the built-in invented demo chain, whose stores
// share a persistent chain-wide shock (AR(1) in logs) and single-period
// promotions (fixtures/generate.go).
//
// Run from the repository root: go run ./bench/coverage [-origins 12] [-demo] [-compare base,mint-shrink,temporal]
package main

import (
	"context"
	"flag"
	"fmt"
	"os"
	"path/filepath"
	"strings"
	"time"

	"trueup/engine"
	"trueup/fixtures"
	"trueup/fixtures/reference"
	"trueup/hierarchy"
)

func main() {
	origins := flag.Int("origins", 12, "forecast origins, one month apart")
	demo := flag.Bool("demo", false, "also measure the built-in demo chain")
	compare := flag.String("compare", "", "methods to compare, comma-separated (default: the backtest's)")
	flag.Parse()
	dir, err := os.MkdirTemp("", "trueup-coverage")
	if err != nil {
		fail(err)
	}
	defer os.RemoveAll(dir)
	path, err := writeTexasCities(dir)
	if err != nil {
		fail(err)
	}
	measure("Texas home sales by city (R ggplot2 txhousing, 26 cities)", engine.Source{
		Path: path, Time: "period", Value: "sales", Chains: []hierarchy.Chain{{"city"}}}, *origins, *compare)
	if *demo {
		path := filepath.Join(dir, "demo.parquet")
		if err := os.WriteFile(path, fixtures.DemoMonthlyParquet, 0o644); err != nil {
			fail(err)
		}
		measure("built-in demo chain (invented)", engine.Source{
			Path: path, Time: "period", Value: "sales", Chains: fixtures.DemoChains()}, *origins, *compare)
	}
}

// writeTexasCities writes the txhousing series as one sales table with a
// city key and monthly periods from January 2000.
func writeTexasCities(dir string) (string, error) {
	files, err := reference.Glob("accuracy/data/txhousing_*.csv")
	if err != nil {
		return "", err
	}
	var b strings.Builder
	b.WriteString("period,city,sales\n")
	for _, f := range files {
		city := strings.TrimSuffix(strings.TrimPrefix(filepath.Base(f), "txhousing_"), ".csv")
		y, err := reference.Series(f)
		if err != nil {
			return "", err
		}
		for t, v := range y {
			fmt.Fprintf(&b, "%d-%02d,%s,%g\n", 2000+t/12, t%12+1, city, v)
		}
	}
	path := filepath.Join(dir, "txhousing.csv")
	return path, os.WriteFile(path, []byte(b.String()), 0o644)
}

// measure backtests one source and prints its table.
func measure(title string, src engine.Source, origins int, compare string) {
	start := time.Now()
	data, err := engine.Load(src)
	if err != nil {
		fail(err)
	}
	var methods []string
	if compare != "" {
		methods = strings.Split(compare, ",")
	}
	bt, err := engine.Backtest(context.Background(), data, engine.BacktestOptions{
		Options: engine.Options{Horizon: 12, Fitter: engine.Local{Workers: 2}}, Origins: origins, Compare: methods})
	if err != nil {
		fail(err)
	}
	fmt.Printf("%s, %d origins, horizon 12\n\n", title, origins)
	fmt.Println("| method | level | MASE | inside 80% | inside 95% |")
	fmt.Println("|---|---|---|---|---|")
	for _, m := range bt.Methods {
		for _, s := range bt.Scores {
			if s.Method != m || s.Step != 0 {
				continue
			}
			fmt.Printf("| %s | %s | %.3f |", m, s.Level, s.MASE)
			for l := range bt.Levels {
				fmt.Printf(" %.0f%% |", 100*s.Coverage[l])
			}
			fmt.Println()
		}
	}
	fmt.Println()
	fmt.Fprintf(os.Stderr, "%s: %.1f s\n", title, time.Since(start).Seconds())
}

func fail(err error) {
	fmt.Fprintln(os.Stderr, err)
	os.Exit(1)
}
