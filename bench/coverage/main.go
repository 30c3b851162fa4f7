// Command coverage measures how often reconciled prediction intervals
// contain what happened, by level and by horizon, on three hierarchies:
//
//   - texas: the monthly home sales of the 26 Texas cities with complete
//     data in R's ggplot2 txhousing table (exported by
//     fixtures/reference/accuracy/export.R) and their total, 27 nodes;
//   - employment: US employees on nonfarm payrolls by industry, monthly
//     2006–2015, seasonally adjusted (the us-employment table of Debian's
//     python3-vega-datasets, exported by
//     fixtures/reference/coverage/export_employment.py), 15 industries in
//     3 sectors and the total, 19 nodes;
//   - demo: the built-in invented demo chain, whose stores share a
//     persistent chain-wide shock (AR(1) in logs) and single-period
//     promotions (fixtures/generate.go), 306 nodes.
//
// It runs trueup's rolling-origin backtest (engine.Backtest: the automatic
// model choice at every node, the default compared methods, horizon 12)
// and prints, per method and level, the MASE, the CRPS, the 80% interval
// score and the share of actuals inside the 80% and 95% intervals over
// all steps, then the coverage by horizon (steps 1–3, 4–6, 7–12), and
// each method's energy score.
//
// Run from the repository root:
//
//	go run ./bench/coverage [-origins 12] [-sets texas,employment,demo] [-compare base,mint-shrink,temporal] [-intervals bootstrap]
package main

import (
	"bytes"
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

// intervals is the interval method every backtest runs with.
var intervals string

func main() {
	origins := flag.Int("origins", 12, "forecast origins, one month apart")
	sets := flag.String("sets", "texas,employment,demo", "hierarchies to measure, comma-separated: texas, employment, demo")
	compare := flag.String("compare", "", "methods to compare, comma-separated (default: the backtest's)")
	flag.StringVar(&intervals, "intervals", "", "interval method: gaussian or bootstrap (default: the engine's)")
	flag.Parse()
	dir, err := os.MkdirTemp("", "trueup-coverage")
	if err != nil {
		fail(err)
	}
	defer os.RemoveAll(dir)
	for _, set := range strings.Split(*sets, ",") {
		switch set {
		case "texas":
			path, err := writeTexasCities(dir)
			if err != nil {
				fail(err)
			}
			measure("Texas home sales by city (R ggplot2 txhousing, 26 cities)", engine.Source{
				Path: path, Time: "period", Value: "sales", Chains: []hierarchy.Chain{{"city"}}}, *origins, *compare)
		case "employment":
			path, err := writeEmployment(dir)
			if err != nil {
				fail(err)
			}
			measure("US employment by sector and industry (vega_datasets us-employment, 15 industries)", engine.Source{
				Path: path, Time: "period", Value: "employed", Chains: []hierarchy.Chain{{"sector", "industry"}}}, *origins, *compare)
		case "demo":
			path := filepath.Join(dir, "demo.parquet")
			if err := os.WriteFile(path, fixtures.DemoMonthlyParquet, 0o644); err != nil {
				fail(err)
			}
			measure("built-in demo chain (invented)", engine.Source{
				Path: path, Time: "period", Value: "sales", Chains: fixtures.DemoChains()}, *origins, *compare)
		default:
			fail(fmt.Errorf("unknown set %q (use texas, employment, demo)", set))
		}
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

// writeEmployment writes the employment table without its provenance
// comment line.
func writeEmployment(dir string) (string, error) {
	data, err := reference.File("coverage/us_employment.csv")
	if err != nil {
		return "", err
	}
	for bytes.HasPrefix(data, []byte("#")) {
		data = data[bytes.IndexByte(data, '\n')+1:]
	}
	path := filepath.Join(dir, "us_employment.csv")
	return path, os.WriteFile(path, data, 0o644)
}

// horizons are the groups of steps the coverage by horizon is shown for.
var horizons = [][2]int{{1, 3}, {4, 6}, {7, 12}}

// measure backtests one source and prints its tables.
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
		Options: engine.Options{Horizon: 12, Fitter: engine.Local{Workers: 2}, Intervals: intervals}, Origins: origins, Compare: methods})
	if err != nil {
		fail(err)
	}
	fmt.Printf("### %s, %d origins, horizon 12\n\n", title, origins)
	fmt.Println("All steps:")
	fmt.Println()
	fmt.Println("| method | level | MASE | CRPS | int. score 80% | inside 80% | inside 95% |")
	fmt.Println("|---|---|---|---|---|---|---|")
	for _, m := range bt.Methods {
		for _, s := range bt.Scores {
			if s.Method != m || s.Step != 0 {
				continue
			}
			fmt.Printf("| %s | %s | %.3f | %.3f | %.2f |", m, s.Level, s.MASE, s.CRPS, s.IntervalScore[0])
			for l := range bt.Levels {
				fmt.Printf(" %.0f%% |", 100*s.Coverage[l])
			}
			fmt.Println()
		}
	}
	fmt.Println()
	fmt.Println("Inside the 80% / 95% intervals by horizon (steps):")
	fmt.Println()
	fmt.Print("| method | level |")
	for _, g := range horizons {
		fmt.Printf(" %d–%d |", g[0], g[1])
	}
	fmt.Println()
	fmt.Println("|---|---|" + strings.Repeat("---|", len(horizons)))
	for _, m := range bt.Methods {
		for _, level := range bt.Structure.LevelNames() {
			fmt.Printf("| %s | %s |", m, level)
			for _, g := range horizons {
				var n float64
				cov := make([]float64, len(bt.Levels))
				for _, s := range bt.Scores {
					if s.Method == m && s.Level == level && s.Step >= g[0] && s.Step <= g[1] {
						n += float64(s.Count)
						for l := range cov {
							cov[l] += float64(s.Count) * s.Coverage[l]
						}
					}
				}
				fmt.Printf(" %.0f%% / %.0f%% |", 100*cov[0]/n, 100*cov[1]/n)
			}
			fmt.Println()
		}
	}
	fmt.Println()
	fmt.Printf("Conformal calibration (engine.CalibrationCheck), origins %d–%d, each calibrated from the errors known before it; inside 80%% / 95%%, uncalibrated → calibrated:\n\n", origins-bt.Calibration[0].Origins+1, origins)
	fmt.Println("| method | level | all steps | int. score 80% | 95% | by horizon group, calibrated | helps |")
	fmt.Println("|---|---|---|---|---|---|---|")
	for _, c := range bt.Calibration {
		for _, l := range c.Levels {
			var hz []string
			for g := range l.CalibratedByHorizon {
				hz = append(hz, fmt.Sprintf("%.0f/%.0f→%.0f/%.0f", 100*l.CoverageByHorizon[g][0], 100*l.CoverageByHorizon[g][1],
					100*l.CalibratedByHorizon[g][0], 100*l.CalibratedByHorizon[g][1]))
			}
			fmt.Printf("| %s | %s | %.0f%% / %.0f%% → %.0f%% / %.0f%% | %.2f → %.2f | %.2f → %.2f | %s | %v |\n", c.Method, l.Level,
				100*l.Coverage[0], 100*l.Coverage[1], 100*l.CalibratedCoverage[0], 100*l.CalibratedCoverage[1],
				l.IntervalScore[0], l.CalibratedInterval[0], l.IntervalScore[1], l.CalibratedInterval[1], strings.Join(hz, " "), c.Helps)
		}
	}
	printSamplingError(bt)
	fmt.Println()
	fmt.Print("Energy score of the joint forecast (scaled):")
	for _, h := range bt.Headline {
		fmt.Printf(" %s %.2f;", h.Method, h.EnergyScore)
	}
	fmt.Println()
	fmt.Println()
	fmt.Fprintf(os.Stderr, "%s: %.1f s\n", title, time.Since(start).Seconds())
}

// printSamplingError prints, per method and level, the share inside each
// interval with the range of its sampling error
// (engine.BacktestResult.CoverageRange: the 5th to 95th percentile over
// resampled target months, a lower bound).
func printSamplingError(bt *engine.BacktestResult) {
	fmt.Println("Sampling error of the shares inside, by level: all steps, 5th–95th percentile over resampled target months (a lower bound; engine.BacktestResult.CoverageRange):")
	fmt.Println()
	fmt.Println("| method | level | inside 80% (range) | inside 95% (range) |")
	fmt.Println("|---|---|---|---|")
	for _, m := range bt.Methods {
		for _, level := range bt.Structure.LevelNames() {
			fmt.Printf("| %s | %s |", m, level)
			for _, lv := range bt.Levels {
				share, lo, hi, ok := bt.CoverageRange(m, level, lv)
				if !ok {
					fmt.Print(" |")
					continue
				}
				fmt.Printf(" %.0f%% (%.0f–%.0f) |", 100*share, 100*lo, 100*hi)
			}
			fmt.Println()
		}
	}
}

func fail(err error) {
	fmt.Fprintln(os.Stderr, err)
	os.Exit(1)
}
