package cli

import (
	"fmt"
	"math"
	"regexp"
	"strconv"
	"strings"
	"testing"
)

// TestFitLabelsSeasonalFactorsByMonth fits ETS(M,N,M) to a monthly
// series that starts in April and sells three times as much every March
// (constructed for this test, with a small alternating wobble), and
// checks that fit prints the seasonal factors labelled by month, March
// highest, and the smoothing weights in words.
func TestFitLabelsSeasonalFactorsByMonth(t *testing.T) {
	var b strings.Builder
	b.WriteString("period,sales\n")
	for k := 0; k < 48; k++ {
		year, month := 2021+(3+k)/12, (3+k)%12+1
		v := 100.0
		if month == 3 {
			v = 300
		}
		v *= 1 + 0.02*math.Sin(float64(k))
		fmt.Fprintf(&b, "%d-%02d,%.3f\n", year, month, v)
	}
	path := writeFile(t, t.TempDir(), "march.csv", b.String())
	out := runOK(t, "fit", "--input", path, "--model", "ETS(M,N,M)", "--horizon", "3")
	if !strings.Contains(out, "smoothing weights") || !regexp.MustCompile(`(?m)^\s+underlying\s+[0-9.]+\s+(held almost fixed|moves slowly|moves with recent periods|follows the latest periods closely)$`).MatchString(out) {
		t.Errorf("no smoothing weights in words:\n%s", out)
	}
	// "level" is a level of the structure only; the smoothed state is
	// "underlying" in the text as in the parameters.
	if regexp.MustCompile(`\blevel\b`).MatchString(out) {
		t.Errorf("fit's text says level for the smoothed state:\n%s", out)
	}
	factors := map[string]float64{}
	for _, m := range regexp.MustCompile(`\b(Jan|Feb|Mar|Apr|May|Jun|Jul|Aug|Sep|Oct|Nov|Dec)\s+([0-9.]+)`).FindAllStringSubmatch(out, -1) {
		v, err := strconv.ParseFloat(m[2], 64)
		if err != nil {
			t.Fatal(err)
		}
		factors[m[1]] = v
	}
	if len(factors) != 12 {
		t.Fatalf("%d months labelled, want 12:\n%s", len(factors), out)
	}
	for month, v := range factors {
		if month != "Mar" && v >= factors["Mar"] {
			t.Errorf("%s's factor %v is not below March's %v:\n%s", month, v, factors["Mar"], out)
		}
	}
	if factors["Mar"] < 2 {
		t.Errorf("March's factor %v, want about 2.5 (300 against an underlying value near 117)", factors["Mar"])
	}
}
