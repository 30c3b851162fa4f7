package engine_test

import (
	"context"
	"testing"

	"trueup/engine"
	"trueup/models/families"
)

// BenchmarkBacktestCost compares one backtest of the five default methods
// over 4 origins with 4 forecasts on the same cut histories (a small
// invented chain, ETS on every node). The target is a ratio of at most
// 1.10: the backtest fits each origin once and shares the fits. The demo
// chain's figures come from bench/backtest.
func BenchmarkBacktestCost(b *testing.B) {
	t := &testing.T{}
	d := chain(t, 4)
	const K, h = 4, 6
	opt := engine.Options{Model: families.Spec{Family: "ets"}, Horizon: h, Fitter: engine.Local{Workers: 2}}
	ctx := context.Background()
	b.Run("forecasts", func(b *testing.B) {
		for b.Loop() {
			for o := 0; o < K; o++ {
				cut, err := d.Cut(d.Panel.T - h - (K - 1 - o))
				if err != nil {
					b.Fatal(err)
				}
				if _, err := engine.Forecast(ctx, cut, opt); err != nil {
					b.Fatal(err)
				}
			}
		}
	})
	b.Run("backtest", func(b *testing.B) {
		for b.Loop() {
			if _, err := engine.Backtest(ctx, d, engine.BacktestOptions{Options: opt, Origins: K}); err != nil {
				b.Fatal(err)
			}
		}
	})
}
