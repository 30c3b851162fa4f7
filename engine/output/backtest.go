package output

import (
	"encoding/json"
	"math"
	"path/filepath"
	"strconv"

	"trueup/accuracy"
	"trueup/engine"
	"trueup/hierarchy"
	"trueup/inputerr"
	"trueup/tableio"
)

// WriteBacktest writes the tables of a backtest (BacktestTables) in every
// named table format, then run.json with the backtest report, as one
// output set in place of the set in dir (see Write). A format that writes
// no tables (a report, say) is refused before anything is written. When
// render is not nil it is called on the staging folder once the tables
// and run.json are in it, and writes one more file of the set (the HTML
// report, which reads them back), whose name it returns; run.json is then
// written again to list it.
func WriteBacktest(dir string, bt *engine.BacktestResult, formats []string, render func(staging string) (string, error)) ([]string, error) {
	var tw []tableWriter
	for _, name := range formats {
		w, ok := lookup(name).(tableWriter)
		if !ok {
			return nil, inputerr.ForOption("Formats", "format %q does not write backtest tables (use parquet, csv or arrow)", name)
		}
		tw = append(tw, w)
	}
	// run.json is written last, but checked first: nothing is written
	// when the report cannot be.
	if _, err := json.Marshal(&bt.Report); err != nil {
		return nil, err
	}
	return writeStaged(dir, backtestSet, func(st *stagedSet) ([]string, error) {
		s := st.path
		tables := BacktestTables(bt)
		var names []string
		for _, w := range tw {
			written, err := w.WriteTables(s, nil, tables)
			if err != nil {
				return nil, err
			}
			for _, p := range written {
				names = append(names, filepath.Base(p))
			}
		}
		writeRun := func() error {
			var err error
			if bt.Report.Files, err = records(s, names); err != nil {
				return err
			}
			data, err := st.runJSON(&bt.Report, names)
			if err != nil {
				return err
			}
			return tableio.WriteFileAtomic(filepath.Join(s, RunFile), data)
		}
		if err := writeRun(); err != nil {
			return nil, err
		}
		if render != nil {
			path, err := render(s)
			if err != nil {
				return nil, err
			}
			names = append(names, filepath.Base(path))
			if err := writeRun(); err != nil {
				return nil, err
			}
		}
		return append(names, RunFile), nil
	})
}

// BacktestTables returns the tables of a backtest:
//
//   - backtest: one row per origin, method, node and step — the level and
//     key columns, origin (first forecast period), period, period_start (its first
//     day, a date), step, method,
//     actual, forecast, error (actual − forecast), scale (the node's
//     in-sample seasonal naive MAE at the origin; null where the node is
//     not scored), scaled_error (error / scale: its mean is the bias, the
//     mean of its absolute value the MASE), scaled_squared_error (error²
//     over the seasonal naive MSE, behind the RMSSE), the interval bounds
//     piL_lower, piL_upper, coverage_L (1 when the actual lies in the
//     interval, 0 when not: the coverage of one actual, whose mean over
//     rows is the scores table's coverage_L), interval_score_L (over the scale) and crps (the CRPS of
//     the Gaussian predictive distribution, over the scale);
//   - scores: level, method, step (null: all steps), count, mase, rmsse,
//     bias, crps, and coverage_L and interval_score_L per interval level,
//     and energy_score (the joint forecast's, see engine.Headline); rows
//     with a null level are the headline (mean over levels), the only rows
//     with an energy score (null elsewhere: it scores all levels at once);
//   - contributions: per coherent method, origin, step, parent and
//     child (one split finer), the child's error and its share of the
//     split's absolute error, the parent's error and the cancellation;
//   - drivers: per coherent method, parent and finer child level
//     (parent_level, parent, child_level, child), the children under the
//     parent ranked by absolute error over origins and steps;
//   - node_scores: each node's MASE per method and its change from base;
//   - incoherence: per origin, step, parent and split, the base
//     forecast, the sum of the children's base forecasts and the
//     difference.
func BacktestTables(bt *engine.BacktestResult) []Table {
	out := []Table{{"backtest", backtestTable(bt)}, {"scores", scoresTable(bt)}}
	at := bt.Attribution
	if at != nil {
		out = append(out, Table{"contributions", contributionsTable(bt)}, Table{"drivers", driversTable(at)},
			Table{"node_scores", nodeScoresTable(at)}, Table{"incoherence", incoherenceTable(bt)})
	}
	return out
}

var nan = math.NaN()

func strCol(name string) tableio.Column { return tableio.Column{Name: name, Type: tableio.String} }
func intCol(name string) tableio.Column { return tableio.Column{Name: name, Type: tableio.Int64} }
func fltCol(name string) tableio.Column { return tableio.Column{Name: name, Type: tableio.Float64} }

// nodeKeys appends node i's level and key values to the key columns
// (integer keys as integers, as keyColumns writes them).
func nodeKeys(cols []tableio.Column, st *hierarchy.Structure, i int) {
	node := st.Nodes[i]
	cols[0].Strings = append(cols[0].Strings, st.Levels[node.Level].Name)
	for a, v := range node.Key {
		c := &cols[a+1]
		c.Null = append(c.Null, v == "")
		if c.Type == tableio.Int64 {
			x, _ := strconv.ParseInt(v, 10, 64) // "" is null
			c.Ints = append(c.Ints, x)
		} else {
			c.Strings = append(c.Strings, v)
		}
	}
}

// emptyKeys returns the level column and one empty column per key
// attribute, typed as the input's key columns and named as keyColumns
// names them.
func emptyKeys(st *hierarchy.Structure, types []tableio.ColumnType) []tableio.Column {
	cols := []tableio.Column{strCol("level")}
	for a, name := range st.Attrs {
		c := strCol(engine.KeyColumn(name))
		if a < len(types) && types[a] == tableio.Int64 {
			c = intCol(engine.KeyColumn(name))
		}
		c.Null = []bool{}
		cols = append(cols, c)
	}
	return cols
}

func backtestTable(bt *engine.BacktestResult) *tableio.Table {
	keys := emptyKeys(bt.Structure, bt.KeyTypes)
	origin, period, step, method := strCol("origin"), strCol("period"), intCol("step"), strCol("method")
	start := tableio.Column{Name: "period_start", Type: tableio.Date, Null: []bool{}}
	actual, forecast, errc, scale := fltCol("actual"), fltCol("forecast"), fltCol("error"), fltCol("scale")
	scaled, squared, crps := fltCol("scaled_error"), fltCol("scaled_squared_error"), fltCol("crps")
	bounds := make([]tableio.Column, 2*len(bt.Levels))
	covered := make([]tableio.Column, len(bt.Levels))
	score := make([]tableio.Column, len(bt.Levels))
	for l, lv := range bt.Levels {
		name := "pi" + engine.LevelLabel(lv)
		bounds[2*l], bounds[2*l+1] = fltCol(name+"_lower"), fltCol(name+"_upper")
		covered[l] = intCol("coverage_" + engine.LevelLabel(lv))
		covered[l].Null = []bool{}
		score[l] = fltCol("interval_score_" + engine.LevelLabel(lv))
	}
	for _, org := range bt.Origins {
		st := org.Structure
		for _, m := range bt.Methods {
			r := org.Results[m]
			for i := range st.Nodes {
				s, s2 := org.ScaleMAE[i], org.ScaleMSE[i]
				scored := org.Scored(i)
				if !scored {
					s, s2 = nan, nan
				}
				for k := 0; k < bt.Horizon; k++ {
					nodeKeys(keys, st, i)
					origin.Strings = append(origin.Strings, org.Start.String())
					p := org.Start.Next(k)
					period.Strings = append(period.Strings, p.String())
					var day int64
					if p.HasDate() {
						day = p.Start().Unix() / 86400
					}
					start.Ints = append(start.Ints, day)
					start.Null = append(start.Null, !p.HasDate())
					step.Ints = append(step.Ints, int64(k+1))
					method.Strings = append(method.Strings, m)
					a, f := org.Actual[i][k], r.Solution.Forecast[i][k]
					actual.Floats = append(actual.Floats, a)
					forecast.Floats = append(forecast.Floats, f)
					errc.Floats = append(errc.Floats, a-f)
					scale.Floats = append(scale.Floats, s)
					scaled.Floats = append(scaled.Floats, (a-f)/s)
					squared.Floats = append(squared.Floats, (a-f)*(a-f)/s2)
					sd := nan
					if r.Solution.Variance != nil {
						sd = math.Sqrt(math.Max(r.Solution.Variance[i][k], 0))
					}
					crps.Floats = append(crps.Floats, accuracy.CRPSGaussian(f, sd, a)/s)
					for l, lv := range bt.Levels {
						lo, hi := r.Bounds(i, k, lv)
						bounds[2*l].Floats = append(bounds[2*l].Floats, lo)
						bounds[2*l+1].Floats = append(bounds[2*l+1].Floats, hi)
						var in int64
						if accuracy.Covered(lo, hi, a) {
							in = 1
						}
						covered[l].Ints = append(covered[l].Ints, in)
						covered[l].Null = append(covered[l].Null, !scored)
						score[l].Floats = append(score[l].Floats, accuracy.IntervalScore(lo, hi, a, lv)/s)
					}
				}
			}
		}
	}
	cols := append(keys, origin, period, start, step, method, actual, forecast, errc, scale, scaled, squared)
	cols = append(cols, bounds...)
	cols = append(cols, covered...)
	cols = append(cols, score...)
	return &tableio.Table{Columns: append(cols, crps)}
}

func scoresTable(bt *engine.BacktestResult) *tableio.Table {
	level, method, step, count := strCol("level"), strCol("method"), intCol("step"), intCol("count")
	level.Null, step.Null = []bool{}, []bool{}
	mase, rmsse, bias, crps, energy := fltCol("mase"), fltCol("rmsse"), fltCol("bias"), fltCol("crps"), fltCol("energy_score")
	cov := make([]tableio.Column, len(bt.Levels))
	is := make([]tableio.Column, len(bt.Levels))
	for l, lv := range bt.Levels {
		cov[l], is[l] = fltCol("coverage_"+engine.LevelLabel(lv)), fltCol("interval_score_"+engine.LevelLabel(lv))
	}
	add := func(lv string, m string, st, n int, ma, rm, bi, cr, es float64, c, s []float64) {
		level.Strings = append(level.Strings, lv)
		level.Null = append(level.Null, lv == "")
		method.Strings = append(method.Strings, m)
		step.Ints = append(step.Ints, int64(st))
		step.Null = append(step.Null, st == 0)
		count.Ints = append(count.Ints, int64(n))
		mase.Floats = append(mase.Floats, ma)
		rmsse.Floats = append(rmsse.Floats, rm)
		bias.Floats = append(bias.Floats, bi)
		crps.Floats = append(crps.Floats, cr)
		energy.Floats = append(energy.Floats, es)
		for l := range cov {
			cov[l].Floats = append(cov[l].Floats, c[l])
			is[l].Floats = append(is[l].Floats, s[l])
		}
	}
	for _, h := range bt.Headline {
		add("", h.Method, 0, 0, h.MASE, h.RMSSE, h.Bias, h.CRPS, h.EnergyScore, h.Coverage, h.IntervalScore)
	}
	for _, s := range bt.Scores {
		add(s.Level, s.Method, s.Step, s.Count, s.MASE, s.RMSSE, s.Bias, s.CRPS, nan, s.Coverage, s.IntervalScore)
	}
	cols := []tableio.Column{level, method, step, count, mase, rmsse, bias, crps}
	for l := range cov {
		cols = append(cols, cov[l], is[l])
	}
	cols = append(cols, energy)
	return &tableio.Table{Columns: cols}
}

func contributionsTable(bt *engine.BacktestResult) *tableio.Table {
	method, origin, period, step := strCol("method"), strCol("origin"), strCol("period"), intCol("step")
	plevel, parent, clevel, child := strCol("parent_level"), strCol("parent"), strCol("child_level"), strCol("child")
	contrib, perr, share, canc := fltCol("contribution"), fltCol("parent_error"), fltCol("share"), fltCol("cancellation")
	for _, c := range bt.Attribution.Contributions {
		org := bt.Origins[c.Origin]
		st := org.Structure
		method.Strings = append(method.Strings, c.Method)
		origin.Strings = append(origin.Strings, org.Start.String())
		period.Strings = append(period.Strings, org.Start.Next(c.Step-1).String())
		step.Ints = append(step.Ints, int64(c.Step))
		plevel.Strings = append(plevel.Strings, st.Levels[st.Nodes[c.Parent].Level].Name)
		parent.Strings = append(parent.Strings, st.Label(c.Parent))
		clevel.Strings = append(clevel.Strings, st.Levels[st.Nodes[c.Child].Level].Name)
		child.Strings = append(child.Strings, st.Label(c.Child))
		contrib.Floats = append(contrib.Floats, c.Contribution)
		perr.Floats = append(perr.Floats, c.ParentError)
		share.Floats = append(share.Floats, c.Share)
		canc.Floats = append(canc.Floats, c.Cancellation)
	}
	return &tableio.Table{Columns: []tableio.Column{method, origin, period, step, plevel, parent, clevel, child, contrib, perr, share, canc}}
}

func driversTable(at *engine.Attribution) *tableio.Table {
	method, plevel, parent, clevel, child := strCol("method"), strCol("parent_level"), strCol("parent"), strCol("child_level"), strCol("child")
	rank, abs, net, share := intCol("rank"), fltCol("abs_error"), fltCol("net_error"), fltCol("share")
	for _, d := range at.Drivers {
		method.Strings = append(method.Strings, d.Method)
		plevel.Strings = append(plevel.Strings, d.ParentLevel)
		parent.Strings = append(parent.Strings, d.Parent)
		clevel.Strings = append(clevel.Strings, d.ChildLevel)
		child.Strings = append(child.Strings, d.Child)
		rank.Ints = append(rank.Ints, int64(d.Rank))
		abs.Floats = append(abs.Floats, d.AbsError)
		net.Floats = append(net.Floats, d.NetError)
		share.Floats = append(share.Floats, d.Share)
	}
	return &tableio.Table{Columns: []tableio.Column{method, plevel, parent, clevel, child, rank, abs, net, share}}
}

func nodeScoresTable(at *engine.Attribution) *tableio.Table {
	method, level, node, mase, change := strCol("method"), strCol("level"), strCol("node"), fltCol("mase"), fltCol("change_from_base")
	for _, s := range at.NodeScores {
		method.Strings = append(method.Strings, s.Method)
		level.Strings = append(level.Strings, s.Level)
		node.Strings = append(node.Strings, s.Node)
		mase.Floats = append(mase.Floats, s.MASE)
		change.Floats = append(change.Floats, s.Change)
	}
	return &tableio.Table{Columns: []tableio.Column{method, level, node, mase, change}}
}

func incoherenceTable(bt *engine.BacktestResult) *tableio.Table {
	origin, period, step := strCol("origin"), strCol("period"), intCol("step")
	level, node, split := strCol("parent_level"), strCol("parent"), strCol("child_level")
	base, sum, diff := fltCol("base"), fltCol("children_base"), fltCol("incoherence")
	for _, in := range bt.Attribution.Incoherence {
		org := bt.Origins[in.Origin]
		st := org.Structure
		origin.Strings = append(origin.Strings, org.Start.String())
		period.Strings = append(period.Strings, org.Start.Next(in.Step-1).String())
		step.Ints = append(step.Ints, int64(in.Step))
		level.Strings = append(level.Strings, st.Levels[st.Nodes[in.Parent].Level].Name)
		node.Strings = append(node.Strings, st.Label(in.Parent))
		split.Strings = append(split.Strings, st.Levels[in.SplitLevel].Name)
		base.Floats = append(base.Floats, in.Base)
		sum.Floats = append(sum.Floats, in.Sum)
		diff.Floats = append(diff.Floats, in.Base-in.Sum)
	}
	return &tableio.Table{Columns: []tableio.Column{origin, period, step, level, node, split, base, sum, diff}}
}
