package cli

import (
	"errors"
	"testing"
)

// FuzzParseLevels feeds arbitrary --intervals values: no input may panic,
// every failure is a usage error (exit 2), and accepted levels lie
// strictly between 0 and 100, none repeated.
func FuzzParseLevels(f *testing.F) {
	for _, s := range []string{"80,95", "80,80", "99.5", "0", "100", "NaN", "1e2", " 50 , 60 ", ",", ""} {
		f.Add(s)
	}
	f.Fuzz(func(t *testing.T, s string) {
		levels, err := parseLevels(s)
		if err != nil {
			var ue *usageError
			if !errors.As(err, &ue) {
				t.Fatalf("%q: a failure that is not a usage error: %v", s, err)
			}
			return
		}
		seen := map[float64]bool{}
		for _, l := range levels {
			if !(l > 0 && l < 100) || seen[l] {
				t.Fatalf("%q accepted as %v", s, levels)
			}
			seen[l] = true
		}
	})
}
