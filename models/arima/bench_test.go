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
