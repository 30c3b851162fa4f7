package engine

import (
	"math"
	"slices"
	"testing"

	"trueup/hierarchy"
	"trueup/reconcile"
)

// joinAlike is a structure in which bottom series have keys that are
// equal once joined with a NUL byte: {"a\x00b", "c"} and {"a", "b\x00c"}.
func joinAlike(t *testing.T) *hierarchy.Structure {
	t.Helper()
	keys := [][]string{{"a\x00b", "c"}, {"a", "b\x00c"}, {"a", "c"}, {"a\x00b", "d"}, {"e", "c"}}
	st, err := hierarchy.Build([]hierarchy.Chain{{"region"}, {"category"}}, keys)
	if err != nil {
		t.Fatal(err)
	}
	return st
}

// TestOpenStructureKeepsKeysThatJoinAlike closes one series and checks
// that every node of the open structure maps to the node of the full
// structure with the same key and level.
func TestOpenStructureKeepsKeysThatJoinAlike(t *testing.T) {
	full := joinAlike(t)
	closed := make([]bool, full.NumBottom())
	closed[full.NumBottom()-1] = true
	op, err := openStructure(full, closed)
	if err != nil {
		t.Fatal(err)
	}
	if op.st.NumBottom() != full.NumBottom()-1 {
		t.Fatalf("open structure has %d bottom series, want %d", op.st.NumBottom(), full.NumBottom()-1)
	}
	seen := map[int]bool{}
	for i, f := range op.toFull {
		if !slices.Equal(op.st.Nodes[i].Key, full.Nodes[f].Key) || seen[f] {
			t.Errorf("open node %q maps to %q (twice: %v)", op.st.Nodes[i].Key, full.Nodes[f].Key, seen[f])
		}
		seen[f] = true
	}
}

// TestAttributionKeepsKeysThatJoinAlike scores one origin by hand: every
// node gets its own score, equal to its mean absolute error over its
// scale, and every driver's absolute error is its node's.
func TestAttributionKeepsKeysThatJoinAlike(t *testing.T) {
	full := joinAlike(t)
	keep := []bool{true, true, true, true, false}
	st, _, err := full.Sub(keep)
	if err != nil {
		t.Fatal(err)
	}
	n, m := st.S.Dims()
	const h = 2
	actual, forecast := make([][]float64, m), make([][]float64, m)
	for j := range actual {
		actual[j] = []float64{float64(10 * (j + 1)), float64(7 * (j + 2))}
		forecast[j] = []float64{float64(9*(j+1)) + 0.5, float64(8 * (j + 1))}
	}
	sol := reconcile.Solution{Forecast: st.S.Aggregate(forecast)}
	org := &BacktestOrigin{Structure: st, Actual: st.S.Aggregate(actual),
		Results:  map[string]*Result{BaseMethod: {Solution: sol}, "bottom-up": {Solution: sol}},
		ScaleMAE: make([]float64, n), ScaleMSE: make([]float64, n), fits: make([]NodeFit, n)}
	for i := range org.ScaleMAE {
		org.ScaleMAE[i], org.ScaleMSE[i] = float64(i+1), 1
	}
	res := &BacktestResult{Structure: full, Horizon: h, Methods: []string{BaseMethod, "bottom-up"}, Origins: []*BacktestOrigin{org}}
	at := attribute(res)
	if len(at.NodeScores) != 2*n {
		t.Fatalf("%d node scores, want %d (one per node and method)", len(at.NodeScores), 2*n)
	}
	byLabel := map[string]int{}
	for i := range st.Nodes {
		byLabel[st.Label(i)] = i
	}
	if len(byLabel) != n {
		t.Fatalf("%d labels for %d nodes", len(byLabel), n)
	}
	for _, s := range at.NodeScores {
		i := byLabel[s.Node]
		want := 0.0
		for k := 0; k < h; k++ {
			want += math.Abs(org.Error(s.Method, i, k)) / org.ScaleMAE[i] / h
		}
		if math.Abs(s.MASE-want) > 1e-12*want {
			t.Errorf("%s %s: MASE %g, want %g", s.Method, s.Node, s.MASE, want)
		}
	}
	for _, d := range at.Drivers {
		i := byLabel[d.Child]
		want := 0.0
		for k := 0; k < h; k++ {
			want += math.Abs(org.Error(d.Method, i, k))
		}
		if math.Abs(d.AbsError-want) > 1e-9 {
			t.Errorf("driver %s under %s: %g, want %g", d.Child, d.Parent, d.AbsError, want)
		}
	}
}
