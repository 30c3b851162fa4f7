package hierarchy

import (
	"fmt"
	"testing"
)

// BenchmarkBuild builds the structure of the reconcile benchmark (state →
// store crossed with category → department → item: 39,442 nodes, 30,000
// bottom series). Run with go test -bench Build -run '^$' ./hierarchy
func BenchmarkBuild(b *testing.B) {
	var keys [][]string
	for s := 0; s < 2; s++ {
		for st := 0; st < 5; st++ {
			for c := 0; c < 3; c++ {
				for d := 0; d < 10; d++ {
					for i := 0; i < 100; i++ {
						keys = append(keys, []string{
							fmt.Sprintf("S%d", s), fmt.Sprintf("S%dT%d", s, st),
							fmt.Sprintf("C%d", c), fmt.Sprintf("C%dD%d", c, d), fmt.Sprintf("C%dD%dI%d", c, d, i)})
					}
				}
			}
		}
	}
	chains := []Chain{{"state", "store"}, {"category", "department", "item"}}
	for b.Loop() {
		if _, err := Build(chains, keys); err != nil {
			b.Fatal(err)
		}
	}
}
