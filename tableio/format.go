package tableio

import (
	"path/filepath"
	"strings"

	"trueup/inputerr"
)

// formats lists the valid formats in the order error messages name them.
var formats = []Format{Parquet, CSV, Arrow}

// Ext is the file name extension trueup gives a table of the format.
func (f Format) Ext() string {
	switch f {
	case Parquet:
		return ".parquet"
	case CSV:
		return ".csv"
	case Arrow:
		return ".arrow"
	}
	return ""
}

func (f Format) valid() bool { return f.Ext() != "" }

// ParseFormats reads a comma-separated list of formats such as
// "parquet,csv,arrow". Repeated names count once; the order of first
// mention is kept. An empty list or an unknown name is an input error.
func ParseFormats(s string) ([]Format, error) {
	var out []Format
	seen := map[Format]bool{}
	for _, part := range strings.Split(s, ",") {
		f := Format(strings.ToLower(strings.TrimSpace(part)))
		if f == "" {
			continue
		}
		if !f.valid() {
			return nil, inputerr.New("unknown format %q (valid formats: %s)", part, validFormats())
		}
		if !seen[f] {
			seen[f] = true
			out = append(out, f)
		}
	}
	if len(out) == 0 {
		return nil, inputerr.New("no output format given (valid formats: %s)", validFormats())
	}
	return out, nil
}

func validFormats() string {
	names := make([]string, len(formats))
	for i, f := range formats {
		names[i] = string(f)
	}
	return strings.Join(names, ", ")
}

// formatOf picks the format of the file at path: the override when set,
// else by extension (.parquet/.pq, .csv, .arrow/.ipc/.feather).
func formatOf(path string, override Format) (Format, error) {
	if override != "" {
		if !override.valid() {
			return "", inputerr.New("unknown format %q (valid formats: %s)", override, validFormats())
		}
		return override, nil
	}
	switch strings.ToLower(filepath.Ext(path)) {
	case ".parquet", ".pq":
		return Parquet, nil
	case ".csv":
		return CSV, nil
	case ".arrow", ".ipc", ".feather":
		return Arrow, nil
	}
	return "", inputerr.New("%s: cannot tell the format from the file name extension (use .parquet, .pq, .csv, .arrow, .ipc or .feather, or name the format: %s)", path, validFormats())
}
