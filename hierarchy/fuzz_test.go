package hierarchy

import (
	"strings"
	"testing"

	"trueup/inputerr"
)

// FuzzParseNest feeds arbitrary --nest values (split on newlines into
// several chains): no input may panic, every failure is an input error,
// and an accepted chain names each key column once, none empty.
func FuzzParseNest(f *testing.F) {
	for _, s := range []string{"region,store\ncategory", "region, store", "a,,b", "a\na", ",", "", "region,store,region"} {
		f.Add(s)
	}
	f.Fuzz(func(t *testing.T, s string) {
		chains, err := ParseNest(strings.Split(s, "\n"))
		if err != nil {
			if !inputerr.Is(err) {
				t.Fatalf("%q: a failure that is not an input error: %v", s, err)
			}
			return
		}
		seen := map[string]bool{}
		for _, c := range chains {
			for _, col := range c {
				if col == "" || seen[col] {
					t.Fatalf("%q gave chains %v: empty or repeated column %q", s, chains, col)
				}
				seen[col] = true
			}
		}
	})
}
