package engine

import (
	"fmt"
	"strings"
	"testing"

	"trueup/inputerr"
)

// monthsOf returns n monthly rows of one store from 2020-01, with values.
func monthsOf(store string, n int, value func(i int) float64) ([][3]string, []float64) {
	var rows [][3]string
	var vals []float64
	for i := 0; i < n; i++ {
		rows = append(rows, [3]string{fmt.Sprintf("%d-%02d", 2020+i/12, i%12+1), store, ""})
		vals = append(vals, value(i))
	}
	return rows, vals
}

func near1e4(i int) float64 { return 10000 + float64(i%12)*250 }

// TestImplausibleInputIsRefused checks each implausible input named in the
// plausibility rules: an input error naming the row (or both spellings),
// before any panel is built.
func TestImplausibleInputIsRefused(t *testing.T) {
	cases := []struct {
		name  string
		extra [3]string
		value float64
		want  []string
	}{
		{"lone year 9999", [3]string{"9999-12", "Harbour Street", ""}, 1, []string{"row 73", "9999-12", "2020-01 to 2025-12"}},
		{"lone year 2120", [3]string{"2120-01", "Harbour Street", ""}, 1, []string{"row 73", "2120-01"}},
		{"trailing space", [3]string{"2025-12", "Mill Lane ", ""}, 1, []string{`"Mill Lane"`, `"Mill Lane "`}},
		{"letter case", [3]string{"2025-12", "mill lane", ""}, 1, []string{`"Mill Lane"`, `"mill lane"`}},
		{"overflowing value", [3]string{"2025-12", "Quay Road", ""}, 1e300, []string{"row 73", "1e+300"}},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			a, av := monthsOf("Harbour Street", 36, near1e4)
			b, bv := monthsOf("Mill Lane", 36, near1e4)
			b[35][0] = "2025-12" // the table runs 2020-01 to 2025-12
			rows := append(append(a, b...), c.extra)
			vals := append(append(av, bv...), c.value)
			_, err := BuildPanel(rowsOf(t, rows, vals), PanelOptions{})
			if !inputerr.Is(err) {
				t.Fatalf("got %v, want an input error", err)
			}
			for _, w := range c.want {
				if !strings.Contains(err.Error(), w) {
					t.Errorf("%q does not name %q", err, w)
				}
			}
		})
	}
}

// TestHugeOutlierIsAWarning: one value of 1e12 among values near 1e4 is
// reported with its row; a seasonal peak 50 times the usual is not.
func TestHugeOutlierIsAWarning(t *testing.T) {
	rows, vals := monthsOf("Harbour Street", 36, near1e4)
	vals[10] = 1e12
	vals[22] = 50 * vals[22]
	pn, err := BuildPanel(rowsOf(t, rows, vals), PanelOptions{})
	if err != nil {
		t.Fatal(err)
	}
	if len(pn.Stats.Outliers) != 1 || !strings.Contains(pn.Stats.Outliers[0], "row 11: value 1e+12") {
		t.Errorf("outliers %q, want one naming row 11", pn.Stats.Outliers)
	}
}
