// Command accuracy compares the automatic per-series family choice with
// automatic ARIMA alone (on the raw and on the Box–Cox scale), automatic
// ETS alone and seasonal naive on public
// seasonal series from R's datasets package (R 4.2.2, exported with
// provenance by fixtures/reference/ets/export_datasets.R). Each series is
// fitted with its last two seasons held out; the forecasts for those two
// seasons are scored by MASE (Hyndman & Koehler 2006) scaled by the
// in-sample seasonal naive error of the training part. It prints a
// Markdown table with the per-series scores and the means.
//
// "auto" is choose.Standard, the configuration trueup runs: its ARIMA candidate
// works on the Box–Cox scale with λ by Guerrero's method (ARIMA has no
// multiplicative form, so the transform gives it what multiplicative ETS
// forms have), its ETS candidate on the raw scale. "auto (raw ARIMA)"
// shows the same choice with an untransformed ARIMA candidate.
//
// Run from the repository root: go run ./bench/ets/accuracy
package main

import (
	"fmt"
	"math"
	"os"
	"strings"
	"time"
	"trueup/fixtures/reference"

	"trueup/models"
	"trueup/models/arima"
	"trueup/models/choose"
	"trueup/models/ets"
	"trueup/models/naive"
	"trueup/models/transform"
)

// seriesSet lists the seasonal R datasets used and their periods.
var seriesSet = []struct {
	name   string
	period int
}{
	{"AirPassengers", 12}, {"co2", 12}, {"fdeaths", 12}, {"ldeaths", 12},
	{"mdeaths", 12}, {"nottem", 12}, {"UKDriverDeaths", 12}, {"USAccDeaths", 12},
	{"Seatbelts_front", 12}, {"Seatbelts_rear", 12},
	{"austres", 4}, {"JohnsonJohnson", 4}, {"UKgas", 4},
}

func main() {
	arimaBC := transform.Family{Inner: arima.Family{}, Opt: transform.Options{Kind: transform.BoxCox}}
	methods := []struct {
		name string
		fam  models.Family
	}{
		{"auto", choose.Standard(choose.Options{})},
		{"auto (raw ARIMA)", choose.New(arima.Family{}, ets.Family{}, naive.SeasonalNaive{}, naive.Drift{}, choose.Options{})},
		{"arima (Box-Cox)", arimaBC},
		{"arima (raw)", arima.Family{}},
		{"ets", ets.Family{}},
		{naive.SeasonalNaiveName, naive.SeasonalNaive{}},
	}
	sums := make([]float64, len(methods))
	var b strings.Builder
	b.WriteString("| series | m | n |")
	for _, m := range methods {
		b.WriteString(" " + m.name + " |")
	}
	b.WriteString(" auto chose |\n|---|---|---|" + strings.Repeat("---|", len(methods)+1) + "\n")
	start := time.Now()
	for _, s := range seriesSet {
		y, err := reference.Series("ets/data/" + s.name + ".csv")
		if err != nil {
			fmt.Fprintln(os.Stderr, err)
			os.Exit(1)
		}
		h := 2 * s.period
		train, test := y[:len(y)-h], y[len(y)-h:]
		scale := seasonalNaiveMAE(train, s.period)
		fmt.Fprintf(&b, "| %s | %d | %d |", s.name, s.period, len(y))
		chose := ""
		for i, m := range methods {
			fit, err := m.fam.Fit(train, models.FitOptions{Period: s.period, Horizon: h})
			if err != nil {
				fmt.Fprintf(os.Stderr, "%s %s: %v\n", s.name, m.name, err)
				os.Exit(1)
			}
			mean, _ := fit.Forecast(h)
			mae := 0.0
			for j := range test {
				mae += math.Abs(test[j] - mean[j])
			}
			v := mae / float64(h) / scale
			sums[i] += v
			fmt.Fprintf(&b, " %.3f |", v)
			if i == 0 {
				chose = fit.Family()
			}
		}
		fmt.Fprintf(&b, " %s |\n", chose)
	}
	n := float64(len(seriesSet))
	b.WriteString("| **mean MASE** | | |")
	for i := range methods {
		fmt.Fprintf(&b, " **%.3f** |", sums[i]/n)
	}
	b.WriteString(" |\n")
	fmt.Print(b.String())
	fmt.Fprintf(os.Stderr, "%d series in %.1f s\n", len(seriesSet), time.Since(start).Seconds())
}

// seasonalNaiveMAE is the in-sample mean absolute error of the seasonal
// naive method, the MASE denominator for seasonal data.
func seasonalNaiveMAE(y []float64, m int) float64 {
	s := 0.0
	for t := m; t < len(y); t++ {
		s += math.Abs(y[t] - y[t-m])
	}
	return s / float64(len(y)-m)
}
