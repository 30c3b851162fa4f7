// Command accuracy measures the automatic choice against each of its
// candidates alone, the airline model on logs and seasonal naive on public
// seasonal series: R's datasets package (exported by
// fixtures/reference/ets/export_datasets.R), R's boot and modeldata
// packages and the Seattle weather table of python3-vega-datasets
// (fixtures/reference/accuracy/export.R and export_vega.py). Each series is
// fitted with its last two seasons held out; the forecasts for those two
// seasons are scored by MASE (Hyndman & Koehler 2006) scaled by the
// in-sample seasonal naive error of the training part. It prints a
// Markdown table with the per-series scores, the mean and median MASE of
// every method, and the share of held-out values inside the automatic
// choice's Gaussian 80% and 95% intervals (mean ± z·sd, as the engine
// computes bounds).
//
// Run from the repository root: go run ./bench/accuracy [-margin 0.1]
package main

import (
	"flag"
	"fmt"
	"math"
	"os"
	"sort"
	"strings"
	"time"

	"trueup/fixtures/reference"
	"trueup/models"
	"trueup/models/arima"
	"trueup/models/choose"
	"trueup/models/ets"
	"trueup/models/naive"
	"trueup/models/theta"
	"trueup/models/transform"
)

// series is one public series of the table, the file under
// fixtures/reference that holds it, its period and the set it belongs to.
type series struct {
	file   string
	period int
	set    string
}

// Sets of series. "classic" are the seasonal series of R's datasets
// package and a few other open tables; "txhousing" are the monthly home
// sales of every Texas city with complete data in R's ggplot2 package.
const (
	classic   = "classic"
	txhousing = "txhousing"
)

// seriesSet lists the series of the table: the classic set, then every
// txhousing city exported by fixtures/reference/accuracy/export.R.
func seriesSet() ([]series, error) {
	set := []series{
		{"ets/data/AirPassengers", 12, classic}, {"ets/data/co2", 12, classic}, {"ets/data/fdeaths", 12, classic},
		{"ets/data/ldeaths", 12, classic}, {"ets/data/mdeaths", 12, classic}, {"ets/data/nottem", 12, classic},
		{"ets/data/UKDriverDeaths", 12, classic}, {"ets/data/USAccDeaths", 12, classic},
		{"ets/data/Seatbelts_front", 12, classic}, {"ets/data/Seatbelts_rear", 12, classic},
		{"ets/data/austres", 4, classic}, {"ets/data/JohnsonJohnson", 4, classic}, {"ets/data/UKgas", 4, classic},
		{"accuracy/data/freeny_y", 4, classic}, {"accuracy/data/drinks", 12, classic},
		{"accuracy/data/seattle_tmax", 12, classic}, {"accuracy/data/seattle_precip", 12, classic},
	}
	files, err := reference.Glob("accuracy/data/txhousing_*.csv")
	if err != nil {
		return nil, err
	}
	for _, f := range files {
		set = append(set, series{strings.TrimSuffix(f, ".csv"), 12, txhousing})
	}
	return set, nil
}

func main() {
	margin := flag.Float64("margin", 0, "Options.Margin of the automatic choice (0: its default)")
	origins := flag.Int("origins", 0, "Options.Origins of the automatic choice (0: its default)")
	explain := flag.Bool("explain", false, "print, on standard error, each series' validation scores and the form every method fitted")
	flag.Parse()
	arimaBC := transform.Family{Inner: arima.Family{Options: arima.AutoOptions{RankByCSS: true}}, Opt: transform.Options{Kind: transform.BoxCox}}
	auto := choose.Standard(choose.Options{Margin: *margin, Origins: *origins})
	methods := []struct {
		name string
		fam  func(m int) models.Family
	}{
		{"auto", func(int) models.Family { return auto }},
		{"median of ETS, ARIMA, Theta", func(int) models.Family { return medianOnly{arimaBC} }},
		{"theta", func(int) models.Family { return theta.Family{} }},
		{"ets", func(int) models.Family { return ets.Family{} }},
		{"arima (Box-Cox)", func(int) models.Family { return arimaBC }},
		{"airline on logs", func(m int) models.Family { return airline{m} }},
		{"drift", func(int) models.Family { return naive.Drift{} }},
		{naive.SeasonalNaiveName, func(int) models.Family { return naive.SeasonalNaive{} }},
	}
	set, err := seriesSet()
	if err != nil {
		fail(err)
	}
	scores := make([][]float64, len(methods))
	var b strings.Builder
	b.WriteString("| series | m | n |")
	for _, m := range methods {
		b.WriteString(" " + m.name + " |")
	}
	b.WriteString(" auto chose |\n|---|---|---|" + strings.Repeat("---|", len(methods)+1) + "\n")
	var in80, in95, total int
	start := time.Now()
	for _, s := range set {
		y, err := reference.Series(s.file + ".csv")
		if err != nil {
			fail(err)
		}
		h := 2 * s.period
		train, test := y[:len(y)-h], y[len(y)-h:]
		scale := seasonalNaiveMAE(train, s.period)
		name := s.file[strings.LastIndexByte(s.file, '/')+1:]
		fmt.Fprintf(&b, "| %s | %d | %d |", name, s.period, len(y))
		chose := ""
		for i, m := range methods {
			fit, err := m.fam(s.period).Fit(train, models.FitOptions{Period: s.period, Horizon: h})
			if err != nil {
				fail(fmt.Errorf("%s %s: %v", name, m.name, err))
			}
			mean, variance := fit.Forecast(h)
			mae := 0.0
			for j := range test {
				mae += math.Abs(test[j] - mean[j])
			}
			v := mae / float64(h) / scale
			scores[i] = append(scores[i], v)
			fmt.Fprintf(&b, " %.3f |", v)
			if *explain {
				fmt.Fprintf(os.Stderr, "%s %s: %.3f %s\n", name, m.name, v, fit.Spec())
				if r, ok := fit.(interface{ Reason() string }); ok {
					fmt.Fprintf(os.Stderr, "  %s\n", r.Reason())
				}
			}
			if i == 0 {
				chose = fit.Family()
				for j := range test {
					sd := math.Sqrt(variance[j])
					e := math.Abs(test[j] - mean[j])
					if e <= 1.2815515655446004*sd {
						in80++
					}
					if e <= 1.959963984540054*sd {
						in95++
					}
					total++
				}
			}
		}
		fmt.Fprintf(&b, " %s |\n", chose)
	}
	groups := []struct {
		name string
		keep func(series) bool
	}{
		{fmt.Sprintf("all %d series", len(set)), func(series) bool { return true }},
		{classic, func(s series) bool { return s.set == classic }},
		{txhousing, func(s series) bool { return s.set == txhousing }},
	}
	for _, g := range groups {
		for _, row := range []struct {
			name string
			stat func([]float64) float64
		}{{"mean MASE", mean}, {"median MASE", median}} {
			fmt.Fprintf(&b, "| **%s, %s** | | |", row.name, g.name)
			for i := range methods {
				var xs []float64
				for j, s := range set {
					if g.keep(s) {
						xs = append(xs, scores[i][j])
					}
				}
				fmt.Fprintf(&b, " **%.3f** |", row.stat(xs))
			}
			b.WriteString(" |\n")
		}
	}
	fmt.Print(b.String())
	fmt.Printf("\nauto's Gaussian intervals on the %d held-out values: %.1f%% inside the 80%% interval, %.1f%% inside the 95%% interval\n",
		total, 100*float64(in80)/float64(total), 100*float64(in95)/float64(total))
	fmt.Fprintf(os.Stderr, "%d series in %.1f s\n", len(set), time.Since(start).Seconds())
}

// medianOnly is the median of ETS, ARIMA (the given family) and Theta,
// each fitted with its own automatic search, without validation.
type medianOnly struct{ arima models.Family }

func (medianOnly) Name() string { return "median" }

func (f medianOnly) Fit(y []float64, opt models.FitOptions) (models.Model, error) {
	var parts []models.Model
	for _, fam := range []models.Family{ets.Family{}, f.arima, theta.Family{}} {
		m, err := fam.Fit(y, opt)
		if err != nil {
			return nil, err
		}
		parts = append(parts, m)
	}
	return choose.Median(parts...), nil
}

// airline is ARIMA(0,1,1)(0,1,1) on logs, or on the raw scale for a
// series with a value ≤ 0 (seattle_precip has a dry month).
type airline struct{ m int }

func (airline) Name() string { return "airline" }

func (a airline) Fit(y []float64, opt models.FitOptions) (models.Model, error) {
	pos := true
	for _, v := range y {
		pos = pos && v > 0
	}
	return arima.Fixed{Spec: arima.Spec{Q: 1, D: 1, SQ: 1, SD: 1, Period: a.m, Log: pos}}.Fit(y, opt)
}

func fail(err error) {
	fmt.Fprintln(os.Stderr, err)
	os.Exit(1)
}

func mean(x []float64) float64 {
	s := 0.0
	for _, v := range x {
		s += v
	}
	return s / float64(len(x))
}

func median(x []float64) float64 {
	y := append([]float64(nil), x...)
	sort.Float64s(y)
	n := len(y)
	if n%2 == 1 {
		return y[n/2]
	}
	return (y[n/2-1] + y[n/2]) / 2
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
