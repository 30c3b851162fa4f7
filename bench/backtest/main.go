// Command backtest measures what a backtest costs against the forecasts
// it replaces: on the demo chain it times K forecast runs, one on the
// history cut at each of the K origins (the default reconciliation), and
// one backtest over the same K origins comparing every default method, in
// alternation, and prints the ratio. Fits dominate both; the backtest fits
// each origin once and shares the fits between its methods.
//
//	go run ./bench/backtest [-origins 4] [-workers 2] [-rounds 2]
package main

import (
	"context"
	"flag"
	"fmt"
	"log"
	"os"
	"path/filepath"
	"sort"
	"syscall"
	"time"

	"trueup/engine"
	"trueup/fixtures"
)

func main() {
	origins := flag.Int("origins", 4, "backtest origins")
	workers := flag.Int("workers", 2, "nodes fitted in parallel")
	rounds := flag.Int("rounds", 2, "alternating rounds of each measurement")
	flag.Parse()
	dir, err := os.MkdirTemp("", "trueup-bench")
	if err != nil {
		log.Fatal(err)
	}
	defer os.RemoveAll(dir)
	path := filepath.Join(dir, "demo.parquet")
	if err := os.WriteFile(path, fixtures.DemoMonthlyParquet, 0o644); err != nil {
		log.Fatal(err)
	}
	d, err := engine.Load(engine.Source{Path: path, Time: fixtures.DemoTimeColumn, Value: fixtures.DemoValueColumn,
		Chains: fixtures.DemoChains()})
	if err != nil {
		log.Fatal(err)
	}
	ctx := context.Background()
	opt := engine.Options{Fitter: engine.Local{Workers: *workers}}
	h := engine.DefaultHorizon(d.Panel.Grain.SeasonalPeriod())
	// cpu is the process's user + system CPU time: steadier than wall
	// time on a shared machine.
	cpu := func() time.Duration {
		var ru syscall.Rusage
		if err := syscall.Getrusage(syscall.RUSAGE_SELF, &ru); err != nil {
			log.Fatal(err)
		}
		return time.Duration(ru.Utime.Nano() + ru.Stime.Nano())
	}
	var fc, bc []time.Duration
	forecasts := func() time.Duration {
		c0 := cpu()
		defer func() { fc = append(fc, cpu()-c0) }()
		start := time.Now()
		for o := 0; o < *origins; o++ {
			cut, err := d.Cut(d.Panel.T - h - (*origins - 1 - o))
			if err != nil {
				log.Fatal(err)
			}
			if _, err := engine.Forecast(ctx, cut, opt); err != nil {
				log.Fatal(err)
			}
		}
		return time.Since(start)
	}
	backtest := func() time.Duration {
		c0 := cpu()
		defer func() { bc = append(bc, cpu()-c0) }()
		start := time.Now()
		if _, err := engine.Backtest(ctx, d, engine.BacktestOptions{Options: opt, Origins: *origins}); err != nil {
			log.Fatal(err)
		}
		return time.Since(start)
	}
	var f, b []time.Duration
	for r := 0; r < *rounds; r++ {
		f = append(f, forecasts())
		b = append(b, backtest())
	}
	med := func(x []time.Duration) time.Duration {
		sort.Slice(x, func(i, j int) bool { return x[i] < x[j] })
		return x[len(x)/2]
	}
	fmt.Printf("demo chain, %d nodes, %d origins, %d workers, %d rounds\n", len(d.Structure.Nodes), *origins, *workers, *rounds)
	fmt.Printf("%d forecasts on the cut histories (mint): wall %v, CPU %v (rounds: wall %v, CPU %v)\n", *origins,
		med(f).Round(time.Millisecond), med(fc).Round(time.Millisecond), f, fc)
	fmt.Printf("backtest, methods %v: wall %v, CPU %v (rounds: wall %v, CPU %v)\n", engine.DefaultCompare,
		med(b).Round(time.Millisecond), med(bc).Round(time.Millisecond), b, bc)
	fmt.Printf("ratio backtest / forecasts: wall %.3f, CPU %.3f (target at most 1.10)\n",
		float64(med(b))/float64(med(f)), float64(med(bc))/float64(med(fc)))
}
