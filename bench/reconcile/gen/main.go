// Command gen writes the input files of the reconciliation benchmark: base
// forecasts and in-sample residuals for every node of an invented retail
// structure, state → store crossed with category → department → item.
// The defaults give 2 states × 5 stores and 3 categories × 10 departments
// × 100 items: 30,000 bottom series and 39,442 nodes, 60 residual days and
// a 28-day horizon. Values are seeded draws: a common daily factor per
// category and per state, plus noise, so that residuals are correlated
// across nodes as real retail residuals are.
package main

import (
	"flag"
	"fmt"
	"log"
	"math"
	"math/rand/v2"
	"path/filepath"
	"time"

	"trueup/hierarchy"
	"trueup/tableio"
)

func main() {
	var (
		states    = flag.Int("states", 2, "states")
		storesPer = flag.Int("stores", 5, "stores per state")
		cats      = flag.Int("categories", 3, "categories")
		deptsPer  = flag.Int("departments", 10, "departments per category")
		itemsPer  = flag.Int("items", 100, "items per department")
		T         = flag.Int("T", 60, "residual periods (days)")
		h         = flag.Int("h", 28, "horizon (days)")
		out       = flag.String("out", ".", "output directory")
		format    = flag.String("format", "parquet", "parquet, csv or arrow")
		seed      = flag.Uint64("seed", 1, "random seed")
		negEvery  = flag.Int("negative-every", 0, "set every Nth bottom series' base forecasts to -20, so that --nonnegative has work at every step (0: none)")
		locks     = flag.Bool("locks", false, "also write locks: at every step the total 5% above its base forecast, state ST1 and category CAT2 at theirs, and twenty items of store ST2-02 at zero (23 locks a step)")
	)
	flag.Parse()
	f := tableio.Format(*format)
	var keys [][]string
	for s := 0; s < *states; s++ {
		for t := 0; t < *storesPer; t++ {
			for c := 0; c < *cats; c++ {
				for d := 0; d < *deptsPer; d++ {
					for i := 0; i < *itemsPer; i++ {
						keys = append(keys, []string{
							fmt.Sprintf("ST%d", s+1), fmt.Sprintf("ST%d-%02d", s+1, t+1),
							fmt.Sprintf("CAT%d", c+1), fmt.Sprintf("CAT%d-D%02d", c+1, d+1),
							fmt.Sprintf("CAT%d-D%02d-I%03d", c+1, d+1, i+1)})
					}
				}
			}
		}
	}
	chains := []hierarchy.Chain{{"state", "store"}, {"category", "department", "item"}}
	st, err := hierarchy.Build(chains, keys)
	if err != nil {
		log.Fatal(err)
	}
	n, m := len(st.Nodes), st.NumBottom()
	off := st.BottomOffset()
	rng := rand.New(rand.NewPCG(*seed, 2))

	// Bottom residuals: item noise plus a category-day and a state-day factor.
	factor := func(k int) [][]float64 {
		out := make([][]float64, k)
		for i := range out {
			out[i] = make([]float64, *T)
			for t := range out[i] {
				out[i][t] = rng.NormFloat64()
			}
		}
		return out
	}
	catF, stateF := factor(*cats), factor(*states)
	bottomRes := make([][]float64, m)
	level := make([]float64, m)
	for j := range bottomRes {
		node := st.Nodes[off+j]
		var s, c int
		fmt.Sscanf(node.Key[0], "ST%d", &s)
		fmt.Sscanf(node.Key[2], "CAT%d", &c)
		level[j] = 5 + 20*rng.Float64()
		sd := math.Sqrt(level[j])
		bottomRes[j] = make([]float64, *T)
		for t := range bottomRes[j] {
			bottomRes[j][t] = sd * (0.8*rng.NormFloat64() + 0.4*catF[c-1][t] + 0.3*stateF[s-1][t])
		}
	}
	// Node residuals: the sum of their bottom residuals plus their own
	// model error (each node's base model is fitted on its own).
	agg := st.S.Aggregate(bottomRes)
	nodeLevel := st.S.MulVec(nil, level)
	for i := 0; i < n; i++ {
		own := 0.3 * math.Sqrt(nodeLevel[i])
		for t := range agg[i] {
			agg[i][t] += own * rng.NormFloat64()
		}
	}
	start := time.Date(2026, 3, 1, 0, 0, 0, 0, time.UTC)
	day := func(k int) string { return start.AddDate(0, 0, k).Format("2006-01-02") }

	write := func(name string, periods int, label func(int) string, value func(i, k int) (string, float64, float64)) {
		rows := n * periods
		cols := make([]tableio.Column, 0, len(st.Attrs)+3)
		for _, a := range st.Attrs {
			cols = append(cols, tableio.Column{Name: a, Type: tableio.String, Strings: make([]string, 0, rows), Null: make([]bool, 0, rows)})
		}
		pc := tableio.Column{Name: "period", Type: tableio.String, Strings: make([]string, 0, rows)}
		var vc, wc tableio.Column
		for i := 0; i < n; i++ {
			for k := 0; k < periods; k++ {
				for a, v := range st.Nodes[i].Key {
					cols[a].Strings = append(cols[a].Strings, v)
					cols[a].Null = append(cols[a].Null, v == "")
				}
				pc.Strings = append(pc.Strings, label(k))
				col, v, w := value(i, k)
				if vc.Name == "" {
					vc = tableio.Column{Name: col, Type: tableio.Float64, Floats: make([]float64, 0, rows)}
				}
				vc.Floats = append(vc.Floats, v)
				if !math.IsNaN(w) {
					if wc.Name == "" {
						wc = tableio.Column{Name: "base_variance", Type: tableio.Float64, Floats: make([]float64, 0, rows)}
					}
					wc.Floats = append(wc.Floats, w)
				}
			}
		}
		cols = append(cols, pc, vc)
		if wc.Name != "" {
			cols = append(cols, wc)
		}
		path := filepath.Join(*out, name+f.Ext())
		if err := tableio.WriteTable(path, &tableio.Table{Columns: cols}, f); err != nil {
			log.Fatal(err)
		}
		fmt.Println("wrote", path, rows, "rows")
	}
	write("residuals", *T, func(k int) string { return day(k - *T) }, func(i, k int) (string, float64, float64) {
		return "residual", agg[i][k], math.NaN()
	})
	// Base forecasts: the node's level plus its own error, so they are
	// not coherent; variance grows with the horizon as for a random walk
	// with drift damping (invented).
	mse := make([]float64, n)
	for i := range mse {
		for _, e := range agg[i] {
			mse[i] += e * e
		}
		mse[i] /= float64(*T)
	}
	base := make([][]float64, n)
	for i := range base {
		base[i] = make([]float64, *h)
		for k := range base[i] {
			base[i][k] = nodeLevel[i] + math.Sqrt(mse[i])*rng.NormFloat64()
			if j := i - off; *negEvery > 0 && j >= 0 && j%*negEvery == 0 {
				base[i][k] = -20
			}
		}
	}
	write("base", *h, day, func(i, k int) (string, float64, float64) {
		return "base", base[i][k], mse[i] * (1 + 0.5*math.Log1p(float64(k)))
	})
	if *locks {
		writeLocks(filepath.Join(*out, "locks"+f.Ext()), f, st, base, *h, day)
	}
}

// writeLocks writes the lock table of -locks: the key columns, period and
// value.
func writeLocks(path string, f tableio.Format, st *hierarchy.Structure, base [][]float64, h int, day func(int) string) {
	type lock struct {
		key   []string
		share float64 // of the node's base forecast
	}
	ls := []lock{{[]string{"", "", "", "", ""}, 1.05}, {[]string{"ST1", "", "", "", ""}, 1}, {[]string{"", "", "CAT2", "", ""}, 1}}
	for q := 1; q <= 20; q++ {
		ls = append(ls, lock{[]string{"ST2", "ST2-02", "CAT3", "CAT3-D04", fmt.Sprintf("CAT3-D04-I%03d", q)}, 0})
	}
	cols := make([]tableio.Column, len(st.Attrs))
	for a, name := range st.Attrs {
		cols[a] = tableio.Column{Name: name, Type: tableio.String}
	}
	pc := tableio.Column{Name: "period", Type: tableio.String}
	vc := tableio.Column{Name: "value", Type: tableio.Float64}
	for k := 0; k < h; k++ {
		for _, l := range ls {
			i, ok := st.Lookup(l.key)
			if !ok {
				log.Fatalf("lock key %v is not a node", l.key)
			}
			for a, v := range l.key {
				cols[a].Strings = append(cols[a].Strings, v)
				cols[a].Null = append(cols[a].Null, v == "")
			}
			pc.Strings = append(pc.Strings, day(k))
			vc.Floats = append(vc.Floats, l.share*base[i][k])
		}
	}
	cols = append(cols, pc, vc)
	if err := tableio.WriteTable(path, &tableio.Table{Columns: cols}, f); err != nil {
		log.Fatal(err)
	}
	fmt.Println("wrote", path, len(vc.Floats), "rows")
}
