// Command gen writes the input of the report benchmark: daily unit sales
// of an invented retail structure, state → store crossed with category →
// department → item. The defaults give 2 states × 5 stores and 3
// categories × 10 departments × 100 items: 30,000 bottom series and
// 39,442 nodes, over 120 days. Values are seeded draws: a level per
// series, a weekly pattern and Poisson-like noise, never negative.
package main

import (
	"flag"
	"fmt"
	"log"
	"math"
	"math/rand/v2"
	"path/filepath"
	"time"

	"trueup/tableio"
)

func main() {
	var (
		states    = flag.Int("states", 2, "states")
		storesPer = flag.Int("stores", 5, "stores per state")
		cats      = flag.Int("categories", 3, "categories")
		deptsPer  = flag.Int("departments", 10, "departments per category")
		itemsPer  = flag.Int("items", 100, "items per department")
		T         = flag.Int("T", 120, "days of history")
		out       = flag.String("out", ".", "output directory")
		seed      = flag.Uint64("seed", 1, "random seed")
	)
	flag.Parse()
	rng := rand.New(rand.NewPCG(*seed, 3))
	names := []string{"state", "store", "category", "department", "item"}
	cols := make([]tableio.Column, len(names))
	for a, n := range names {
		cols[a] = tableio.Column{Name: n, Type: tableio.String}
	}
	day := tableio.Column{Name: "day", Type: tableio.String}
	units := tableio.Column{Name: "units", Type: tableio.Float64}
	start := time.Date(2026, 1, 1, 0, 0, 0, 0, time.UTC)
	labels := make([]string, *T)
	for t := range labels {
		labels[t] = start.AddDate(0, 0, t).Format("2006-01-02")
	}
	week := [7]float64{0.8, 0.85, 0.9, 1.0, 1.2, 1.4, 0.85}
	for s := 0; s < *states; s++ {
		for st := 0; st < *storesPer; st++ {
			for c := 0; c < *cats; c++ {
				for d := 0; d < *deptsPer; d++ {
					for i := 0; i < *itemsPer; i++ {
						key := []string{fmt.Sprintf("ST%d", s+1), fmt.Sprintf("ST%d-%02d", s+1, st+1),
							fmt.Sprintf("CAT%d", c+1), fmt.Sprintf("CAT%d-D%02d", c+1, d+1),
							fmt.Sprintf("CAT%d-D%02d-I%03d", c+1, d+1, i+1)}
						level := 2 + 30*rng.Float64()
						for t := 0; t < *T; t++ {
							mean := level * week[t%7]
							v := math.Max(0, math.Round(mean+math.Sqrt(mean)*rng.NormFloat64()))
							for a := range key {
								cols[a].Strings = append(cols[a].Strings, key[a])
							}
							day.Strings = append(day.Strings, labels[t])
							units.Floats = append(units.Floats, v)
						}
					}
				}
			}
		}
	}
	path := filepath.Join(*out, "sales.parquet")
	if err := tableio.WriteTable(path, &tableio.Table{Columns: append(cols, day, units)}, tableio.Parquet); err != nil {
		log.Fatal(err)
	}
	fmt.Printf("wrote %s: %d rows\n", path, len(units.Floats))
}
