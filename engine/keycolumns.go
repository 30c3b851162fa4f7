package engine

import (
	"regexp"
	"strings"

	"trueup/inputerr"
)

// Result tables put the key columns beside columns of their own: level,
// period, forecast, the backtest's origin and method, and so on. A key
// column may carry one of those names (flight data's "origin", a "level"
// of a building), so a key column named like a result column is written
// under the prefix KeyPrefix ("origin" → "key_origin"), and read back
// from either form. Other key columns keep their names.

// KeyPrefix is put before the name of a key column that shares its name
// with a result column.
const KeyPrefix = "key_"

// resultColumns are the columns that the tables holding key columns
// (forecasts, plans, models, residuals, history, backtest) write beside them.
var resultColumns = map[string]bool{
	"level": true, "period": true, "period_start": true, "step": true, "base": true, "base_variance": true,
	"forecast": true, "locked": true, "residual": true, "value": true, "like_for_like": true,
	"status": true, "family": true, "model": true, "params": true, "aicc": true, "innovation_variance": true,
	"variance_scale": true, "observations": true, "warning": true,
	"ljung_box_lags": true, "ljung_box_q": true, "ljung_box_p": true,
	"origin": true, "method": true, "actual": true, "error": true, "scale": true, "scaled_error": true,
	"scaled_squared_error": true, "crps": true,
	"grain": true, "total": true, "periods_actual": true, "periods_forecast": true, "variance": true,
}

// levelColumn matches the result columns named after an interval level
// (LevelLabel): pi80_lower, pi97_5_upper, coverage_95, interval_score_80.
var levelColumn = regexp.MustCompile(`^(pi[0-9_]+_(lower|upper)|coverage_[0-9_]+|interval_score_[0-9_]+)$`)

// IsResultColumn reports whether a result table with key columns writes a
// column of its own named name.
func IsResultColumn(name string) bool {
	return resultColumns[name] || levelColumn.MatchString(name)
}

// KeyColumn is the name under which the key column attr is written in the
// result tables: KeyPrefix + attr when attr is a result column's name,
// attr otherwise.
func KeyColumn(attr string) string {
	if IsResultColumn(attr) {
		return KeyPrefix + attr
	}
	return attr
}

// AttrOf is the key attribute a result table's column col holds: col
// without KeyPrefix when KeyColumn wrote it so ("key_origin" → "origin"),
// col itself otherwise. Code that names nodes from a table's key columns
// (the report) names them by the attributes, as hierarchy.Label does.
func AttrOf(col string) string {
	if attr, ok := strings.CutPrefix(col, KeyPrefix); ok && IsResultColumn(attr) {
		return attr
	}
	return col
}

// checkKeyColumns refuses, before any work, key columns whose names the
// result tables cannot keep apart: a key named like a result column next
// to a key already named with the prefix ("origin" and "key_origin").
func checkKeyColumns(attrs []string) error {
	written := map[string]string{}
	for _, a := range attrs {
		name := KeyColumn(a)
		if other, ok := written[name]; ok {
			return inputerr.ForOption("Chains",
				"key columns %q and %q would both be written as %q (a key column named like a result column is written with the prefix %q); rename one of them",
				other, a, name, KeyPrefix)
		}
		written[name] = a
	}
	return nil
}
