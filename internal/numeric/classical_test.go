package numeric

import (
	"math"
	"testing"

	"trueup/fixtures/reference"
)

func refSeries(t *testing.T, name string) []float64 {
	t.Helper()
	y, err := reference.Series("ets/data/" + name + ".csv")
	if err != nil {
		t.Fatal(err)
	}
	return y
}

// TestACFAgainstR: R 4.2.2, as.numeric(acf(AirPassengers, lag.max = 12,
// plot = FALSE)$acf).
func TestACFAgainstR(t *testing.T) {
	want := []float64{1, 0.948047340752492, 0.875574835125350, 0.806681155496500,
		0.752625417388308, 0.713769972651965, 0.681733603331004, 0.662904386368450,
		0.655610484325087, 0.670948327924505, 0.702719920909072, 0.743240189006933,
		0.760395042262556}
	got := ACF(refSeries(t, "AirPassengers"), 12)
	for k := range want {
		if math.Abs(got[k]-want[k]) > 1e-12 {
			t.Errorf("r_%d = %.15f, R %.15f", k, got[k], want[k])
		}
	}
}

// TestClassicalSeasonalAgainstR: R 4.2.2, decompose(UKgas, type =
// "multiplicative")$figure (UKgas starts in a first quarter, so index j
// belongs to quarter j+1 in both).
func TestClassicalSeasonalAgainstR(t *testing.T) {
	want := []float64{1.453710655826259, 0.955932592312157, 0.558444080734706, 1.031912671126878}
	got, ok := ClassicalSeasonal(refSeries(t, "UKgas"), 4, true)
	if !ok {
		t.Fatal("no indices")
	}
	for j := range want {
		if math.Abs(got[j]-want[j]) > 1e-12 {
			t.Errorf("index %d = %.15f, R %.15f", j, got[j], want[j])
		}
	}
	if _, ok := ClassicalSeasonal(make([]float64, 7), 4, true); ok {
		t.Error("indices from fewer than two seasons")
	}
}

// TestSeasonalityTests: the Theta method's 90% test and the STL strength
// rule on series whose seasonality is not in doubt (monthly deaths,
// quarterly gas use), and the strength rule on one without a season
// (annual Nile flow, read with a made-up period of 4), from R's datasets
// package. The autocorrelation test is not asked about the Nile: a
// persistent series has a large r_m at every lag, and the test, as
// published, then reports seasonality.
func TestSeasonalityTests(t *testing.T) {
	for _, c := range []struct {
		name string
		m    int
		want bool
	}{{"ldeaths", 12, true}, {"UKgas", 4, true}, {"Nile", 4, false}} {
		y := refSeries(t, c.name)
		if got := Seasonal90(y, c.m); c.want && !got {
			t.Errorf("Seasonal90(%s) = %v", c.name, got)
		}
		if got := StronglySeasonal(y, c.m); got != c.want {
			t.Errorf("StronglySeasonal(%s) = %v", c.name, got)
		}
	}
}
