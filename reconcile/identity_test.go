package reconcile

import (
	"testing"

	"trueup/hierarchy"
)

// TestKeysThatJoinAlike reconciles a structure in which two bottom series
// have keys that are equal once joined with a NUL byte ({"a\x00b", "c"}
// and {"a", "b\x00c"}): every method must keep them apart, the two MinT
// solvers must agree on forecasts and variances, and bottom-up must give
// each node the sum of its own bottom series.
func TestKeysThatJoinAlike(t *testing.T) {
	keys := [][]string{{"a\x00b", "c"}, {"a", "b\x00c"}, {"a", "c"}, {"a\x00b", "d"}, {"e", "c"}, {"e", "b\x00c"}}
	st, err := hierarchy.Build([]hierarchy.Chain{{"region"}, {"category"}}, keys)
	if err != nil {
		t.Fatal(err)
	}
	if st.NumBottom() != len(keys) {
		t.Fatalf("%d bottom series, want %d", st.NumBottom(), len(keys))
	}
	p := problemFor(st, 30, 2, 5)
	d, l := denseAndLarge(t, Projection{Cov: CovShrink}, p)
	checkCoherent(t, st, d)
	checkCoherent(t, st, l)
	for i := range st.Nodes {
		for k := 0; k < 2; k++ {
			if relDiff(d.Forecast[i][k], l.Forecast[i][k]) > 1e-8 || relDiff(d.Variance[i][k], l.Variance[i][k]) > 1e-8 {
				t.Errorf("%s step %d: dense %g (var %g), large %g (var %g)", st.Label(i), k+1,
					d.Forecast[i][k], d.Variance[i][k], l.Forecast[i][k], l.Variance[i][k])
			}
		}
	}
	bu, err := BottomUp{}.Reconcile(p)
	if err != nil {
		t.Fatal(err)
	}
	off := st.BottomOffset()
	for i := range st.Nodes {
		want := 0.0
		for _, j := range st.S.Row(i) {
			want += p.Base[off+j][0]
		}
		if relDiff(bu.Forecast[i][0], want) > 1e-12 {
			t.Errorf("bottom-up %s: %g, want %g", st.Label(i), bu.Forecast[i][0], want)
		}
	}
	if _, err := (MiddleOut{Level: "region"}).Reconcile(p); err != nil {
		t.Errorf("middle-out at region: %v", err)
	}
}
