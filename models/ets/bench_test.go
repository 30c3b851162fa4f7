package ets

import "testing"

// BenchmarkAuto96 times the automatic choice on the first 96 months of
// AirPassengers (R datasets); target 20 ms per fit on one core.
func BenchmarkAuto96(b *testing.B) {
	y := loadSeries(b, "AirPassengers")[:96]
	for b.Loop() {
		if _, _, err := Auto(y, 12); err != nil {
			b.Fatal(err)
		}
	}
}
