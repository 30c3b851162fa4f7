package arima

import "testing"

// BenchmarkAirlineFixed fits the airline model to the 144 monthly values
// of log Series G (target: ≤ 3 ms per fit on one core).
func BenchmarkAirlineFixed(b *testing.B) {
	y := loadSeries(b, "airpass")
	spec := Spec{Q: 1, D: 1, SQ: 1, SD: 1, Period: 12, Log: true}
	b.ReportAllocs()
	for b.Loop() {
		if _, err := FitOrder(y, spec, Options{}); err != nil {
			b.Fatal(err)
		}
	}
}

// BenchmarkAutoSelect96 runs the automatic selection on 96 monthly values
// (R datasets::co2, 1990–1997) (target: ≤ 40 ms per series on one core).
func BenchmarkAutoSelect96(b *testing.B) {
	y := loadSeries(b, "co2w")
	b.ReportAllocs()
	for b.Loop() {
		if _, err := Auto(y, AutoOptions{Period: 12}); err != nil {
			b.Fatal(err)
		}
	}
}
