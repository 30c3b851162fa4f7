package accuracy_test

import (
	"encoding/json"
	"math"
	"os"
	"testing"

	"trueup/accuracy"
)

// refCase is one case of fixtures/reference/accuracy/accuracy.json,
// computed by fixtures/reference/accuracy/accuracy.R with base R 4.2.2
// (R's datasets AirPassengers and UKgas; measures written from Hyndman &
// Koehler 2006 and Gneiting & Raftery 2007, eq. 43).
type refCase struct {
	Name             string
	Period           int
	Train            []float64
	Missing          []int
	Actual, Forecast []float64
	ScaleMAE         float64 `json:"scale_mae"`
	ScaleMSE         float64 `json:"scale_mse"`
	MASE, RMSSE      float64
	Intervals        []struct {
		Level         float64
		Lower, Upper  []float64
		Coverage      float64
		IntervalScore []float64 `json:"interval_score"`
	}
}

func close(a, b float64) bool { return math.Abs(a-b) <= 1e-12*math.Max(1, math.Abs(b)) }

func TestAgainstR(t *testing.T) {
	data, err := os.ReadFile("../fixtures/reference/accuracy/accuracy.json")
	if err != nil {
		t.Fatal(err)
	}
	var ref struct {
		Tool  string
		Cases []refCase
	}
	if err := json.Unmarshal(data, &ref); err != nil {
		t.Fatal(err)
	}
	if len(ref.Cases) != 2 {
		t.Fatalf("%d cases", len(ref.Cases))
	}
	for _, c := range ref.Cases {
		for _, i := range c.Missing {
			c.Train[i] = math.NaN()
		}
		mae, mse, lag := accuracy.Scale(c.Train, c.Period)
		if lag != c.Period || !close(mae, c.ScaleMAE) || !close(mse, c.ScaleMSE) {
			t.Errorf("%s: scales %v, %v at lag %d; %s: %v, %v", c.Name, mae, mse, lag, ref.Tool, c.ScaleMAE, c.ScaleMSE)
		}
		if got := accuracy.MASE(c.Actual, c.Forecast, mae); !close(got, c.MASE) {
			t.Errorf("%s: MASE %v, %s %v", c.Name, got, ref.Tool, c.MASE)
		}
		if got := accuracy.RMSSE(c.Actual, c.Forecast, mse); !close(got, c.RMSSE) {
			t.Errorf("%s: RMSSE %v, %s %v", c.Name, got, ref.Tool, c.RMSSE)
		}
		for _, iv := range c.Intervals {
			in := 0
			for k, a := range c.Actual {
				if accuracy.Covered(iv.Lower[k], iv.Upper[k], a) {
					in++
				}
				if got := accuracy.IntervalScore(iv.Lower[k], iv.Upper[k], a, iv.Level); !close(got, iv.IntervalScore[k]) {
					t.Errorf("%s %v%% step %d: interval score %v, %s %v", c.Name, iv.Level, k+1, got, ref.Tool, iv.IntervalScore[k])
				}
			}
			if got := float64(in) / float64(len(c.Actual)); !close(got, iv.Coverage) {
				t.Errorf("%s %v%%: coverage %v, %s %v", c.Name, iv.Level, got, ref.Tool, iv.Coverage)
			}
		}
	}
}

func TestScaleFallsBackToLagOne(t *testing.T) {
	mae, mse, lag := accuracy.Scale([]float64{1, 3, 2}, 12)
	if lag != 1 || mae != 1.5 || mse != 2.5 {
		t.Errorf("got %v %v %d, want 1.5 2.5 1 (by hand)", mae, mse, lag)
	}
	if _, _, lag := accuracy.Scale([]float64{5}, 12); lag != 0 {
		t.Errorf("one value: lag %d, want 0", lag)
	}
}
