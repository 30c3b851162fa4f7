package reconcile

import (
	"math"
	"strings"
	"testing"

	"trueup/hierarchy"
	"trueup/inputerr"
)

// smallTree is total → {A, B}, A → {A1, A2}, B → {B1}: a single chain.
func smallTree(t *testing.T) *hierarchy.Structure {
	st, err := hierarchy.Build([]hierarchy.Chain{{"group", "item"}},
		[][]string{{"A", "A1"}, {"A", "A2"}, {"B", "B1"}})
	if err != nil {
		t.Fatal(err)
	}
	return st
}

// TestTopDownProportions checks the three proportions on a hand-worked
// tree. Nodes: total, A, B, A1, A2, B1. History (two periods): A1 = 1, 3;
// A2 = 1, 1; B1 = 2, 4, so the totals are 4, 8.
//
//	hist (Gross & Sohl 1990, A): A1 = (1/4 + 3/8)/2 = 5/16, A2 = (1/4+1/8)/2
//	    = 3/16, B1 = (2/4 + 4/8)/2 = 1/2
//	avg (Gross & Sohl 1990, F): A1 = 4/12, A2 = 2/12, B1 = 6/12
//	fcst (Athanasopoulos et al. 2009): base A = 30, B = 10, A1 = 12,
//	    A2 = 4, B1 = 7: A1 = 30/40 · 12/16 = 9/16, A2 = 30/40 · 4/16 = 3/16,
//	    B1 = 10/40 · 7/7 = 1/4
func TestTopDownProportions(t *testing.T) {
	st := smallTree(t)
	p := Problem{Structure: st,
		Base:    [][]float64{{80}, {30}, {10}, {12}, {4}, {7}},
		History: [][]float64{{4, 8}, {2, 4}, {2, 4}, {1, 3}, {1, 1}, {2, 4}}}
	for _, tc := range []struct {
		p    Proportions
		want []float64
	}{
		{HistoricalProportions, []float64{5.0 / 16, 3.0 / 16, 1.0 / 2}},
		{ProportionsOfAverages, []float64{4.0 / 12, 2.0 / 12, 6.0 / 12}},
		{ForecastProportions, []float64{9.0 / 16, 3.0 / 16, 1.0 / 4}},
	} {
		sol, err := TopDown{Proportions: tc.p}.Reconcile(p)
		if err != nil {
			t.Fatal(err)
		}
		checkCoherent(t, st, sol)
		for j, w := range tc.want {
			if relDiff(sol.Bottom[j][0], 80*w) > 1e-12 {
				t.Errorf("%s bottom %d: %g, want %g", tc.p, j, sol.Bottom[j][0], 80*w)
			}
		}
		if sol.Forecast[0][0] != 80 {
			t.Errorf("%s: total %g, want the base 80", tc.p, sol.Forecast[0][0])
		}
	}
}

// TestMiddleOut keeps the middle level, adds it up above and splits it by
// forecast proportions below: at level group, A = 30 and B = 10 are kept,
// total = 40, A1 = 30·12/16, A2 = 30·4/16, B1 = 10.
func TestMiddleOut(t *testing.T) {
	st := smallTree(t)
	p := Problem{Structure: st, Base: [][]float64{{80}, {30}, {10}, {12}, {4}, {7}}}
	sol, err := MiddleOut{Level: "group"}.Reconcile(p)
	if err != nil {
		t.Fatal(err)
	}
	want := []float64{40, 30, 10, 22.5, 7.5, 10}
	for i, w := range want {
		if relDiff(sol.Forecast[i][0], w) > 1e-12 {
			t.Errorf("%s: %g, want %g", st.Label(i), sol.Forecast[i][0], w)
		}
	}
	if _, err := (MiddleOut{Level: "nope"}).Reconcile(p); !inputerr.Is(err) {
		t.Errorf("unknown level: %v", err)
	}
}

// TestCrossedChains: forecast proportions across two crossed chains are
// refused with a message that suggests a level and mint; middle-out at a
// level that leaves one chain to split works and is coherent; the
// historical top-down proportions are defined on any structure.
func TestCrossedChains(t *testing.T) {
	st := grouped(t, 2, 2, 3)
	p := problemFor(st, 12, 2, 3)
	_, err := TopDown{Proportions: ForecastProportions}.Reconcile(p)
	if !inputerr.Is(err) || !strings.Contains(err.Error(), "middle-out") || !strings.Contains(err.Error(), "mint") {
		t.Fatalf("top-down-fcst on crossed chains: %v", err)
	}
	if _, err := (MiddleOut{Level: "region"}).Reconcile(p); !inputerr.Is(err) {
		t.Errorf("middle-out at region (leaves store and category to split): %v", err)
	}
	// At category only the region→store chain is left: a tree below.
	if sol, err := (MiddleOut{Level: "category"}).Reconcile(p); err != nil {
		t.Error(err)
	} else {
		checkCoherent(t, st, sol)
	}
	sol, err := MiddleOut{Level: "region+store"}.Reconcile(p)
	if err != nil {
		t.Fatal(err)
	}
	checkCoherent(t, st, sol)
	l, _ := st.LevelByName("region+store")
	for _, i := range st.Levels[l].Nodes {
		if relDiff(sol.Forecast[i][1], p.Base[i][1]) > 1e-12 {
			t.Errorf("%s: middle level not kept: %g vs base %g", st.Label(i), sol.Forecast[i][1], p.Base[i][1])
		}
	}
	for _, prop := range []Proportions{HistoricalProportions, ProportionsOfAverages} {
		sol, err := TopDown{Proportions: prop}.Reconcile(p)
		if err != nil {
			t.Fatal(err)
		}
		checkCoherent(t, st, sol)
		if relDiff(sol.Forecast[0][0], p.Base[0][0]) > 1e-12 {
			t.Errorf("%s: total %g, base %g", prop, sol.Forecast[0][0], p.Base[0][0])
		}
	}
}

// TestSplitVariance: a top-down variance is the total's h-step base
// variance times the squared share of every node, (S·p)_i² · BaseVar_top
// (G = p·e_topᵀ, so S·G·W_h·Gᵀ·Sᵀ = W_h,top · (S·p)(S·p)ᵀ).
func TestSplitVariance(t *testing.T) {
	st := grouped(t, 2, 2, 2)
	p := problemFor(st, 24, 3, 8)
	sol, err := TopDown{Proportions: ProportionsOfAverages}.Reconcile(p)
	if err != nil {
		t.Fatal(err)
	}
	for i := range st.Nodes {
		share := sol.Forecast[i][2] / sol.Forecast[0][2]
		want := share * share * p.BaseVar[0][2]
		if relDiff(sol.Variance[i][2], want) > 1e-10 {
			t.Errorf("%s: variance %g, want %g", st.Label(i), sol.Variance[i][2], want)
		}
	}
}

func TestByName(t *testing.T) {
	for _, name := range MethodNames() {
		at := ""
		if name == "middle-out" {
			at = "region"
		}
		m, err := ByName(name, "", at)
		if err != nil || m.Name() != name {
			t.Errorf("ByName(%q) = %v, %v", name, m, err)
		}
	}
	for _, c := range CovNames() {
		if m, err := ByName("mint", c, ""); err != nil || m.(Projection).Cov != Covariance(c) {
			t.Errorf("cov %s: %v %v", c, m, err)
		}
	}
	for _, bad := range [][3]string{{"mean", "", ""}, {"mint", "diagonal", ""}, {"middle-out", "", ""}, {"bottom-up", "", "region"}, {"bottom-up", "shrink", ""}} {
		_, err := ByName(bad[0], bad[1], bad[2])
		if !inputerr.Is(err) {
			t.Errorf("ByName%q: %v, want an input error", bad, err)
		}
	}
	_, err := ByName("mean", "", "")
	if !strings.Contains(err.Error(), "bottom-up") || !strings.Contains(err.Error(), "mint") {
		t.Errorf("unknown method message does not list the valid ones: %v", err)
	}
}

// TestNoNaNOnZeroForecasts: all-zero base forecasts give zero proportions
// split equally, not NaN.
func TestNoNaNOnZeroForecasts(t *testing.T) {
	st := smallTree(t)
	p := Problem{Structure: st, Base: [][]float64{{0}, {0}, {0}, {0}, {0}, {0}}}
	sol, err := TopDown{Proportions: ForecastProportions}.Reconcile(p)
	if err != nil {
		t.Fatal(err)
	}
	for i := range sol.Forecast {
		if math.IsNaN(sol.Forecast[i][0]) {
			t.Fatalf("NaN at %s", st.Label(i))
		}
	}
}
