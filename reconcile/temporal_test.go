package reconcile

import (
	"encoding/json"
	"math"
	"os"
	"testing"
)

// TestTemporalProjectionMatchesR checks the temporal hierarchy's
// projection with structural scaling (months, quarters, year) against
// base R 4.2.2 computing S(S′Λ⁻¹S)⁻¹S′Λ⁻¹ŷ from the formula of
// Athanasopoulos et al. (2017): fixtures/reference/reconcile/temporal.R,
// output in temporal.json.
func TestTemporalProjectionMatchesR(t *testing.T) {
	data, err := os.ReadFile("../fixtures/reference/reconcile/temporal.json")
	if err != nil {
		t.Fatal(err)
	}
	var ref struct {
		Base   []float64 `json:"base"`
		Months []float64 `json:"months"`
	}
	if err := json.Unmarshal(data, &ref); err != nil {
		t.Fatal(err)
	}
	g, err := temporalProjection(12, []TemporalBase{{Every: 3}, {Every: 12}})
	if err != nil {
		t.Fatal(err)
	}
	for j, want := range ref.Months {
		got := 0.0
		for c, y := range ref.Base {
			got += g.at(j, c) * y
		}
		if math.Abs(got-want) > 1e-9*math.Abs(want) {
			t.Errorf("month %d: %v, R gives %v", j+1, got, want)
		}
	}
}

// TestTemporalKeepsCoherentForecasts: forecasts whose quarters and year
// are already the sums of their months come back unchanged (G·S = I, the
// property of every projection of this family, Athanasopoulos et al.
// 2017).
func TestTemporalKeepsCoherentForecasts(t *testing.T) {
	g, err := temporalProjection(12, []TemporalBase{{Every: 3}, {Every: 12}})
	if err != nil {
		t.Fatal(err)
	}
	months := []float64{5, 7, 2, 9, 11, 4, 6, 8, 3, 10, 1, 12}
	y := append([]float64(nil), months...)
	for q := 0; q < 4; q++ {
		y = append(y, months[3*q]+months[3*q+1]+months[3*q+2])
	}
	y = append(y, 78)
	for j, want := range months {
		got := 0.0
		for c, v := range y {
			got += g.at(j, c) * v
		}
		if math.Abs(got-want) > 1e-12 {
			t.Errorf("month %d: %v, want %v", j+1, got, want)
		}
	}
}

// TestTemporalNeedsCoarseForecasts: without Problem.Temporal the method
// says what it needs instead of reconciling the months alone.
func TestTemporalNeedsCoarseForecasts(t *testing.T) {
	if _, err := (Temporal{}).Reconcile(Problem{}); err == nil {
		t.Fatal("no error without temporal base forecasts")
	}
}

func TestTemporalFactors(t *testing.T) {
	for m, want := range map[int][]int{12: {3, 12}, 52: {13, 52}, 4: {4}, 7: {7}, 1: nil} {
		got := TemporalFactors(m)
		if len(got) != len(want) {
			t.Errorf("m=%d: %v, want %v", m, got, want)
			continue
		}
		for i := range got {
			if got[i] != want[i] {
				t.Errorf("m=%d: %v, want %v", m, got, want)
			}
		}
	}
}
