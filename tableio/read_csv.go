package tableio

import (
	"bytes"
	"encoding/csv"
	"errors"
	"io"
	"math"
	"strconv"
	"strings"

	"trueup/inputerr"
)

// readCSV reads a CSV file with a header row (RFC 4180 quoting, as
// encoding/csv reads it). A leading UTF-8 byte order mark is skipped.
func readCSV(data []byte, opt ReadOptions) (*Rows, error) {
	if bytes.IndexByte(data[:min(len(data), 1<<16)], 0) >= 0 {
		return nil, inputerr.New("not a CSV text file (it contains NUL bytes)")
	}
	data = bytes.TrimPrefix(data, []byte("\xef\xbb\xbf"))
	cr := csv.NewReader(bytes.NewReader(data))
	cr.ReuseRecord = true
	header, err := cr.Read()
	if err == io.EOF {
		return nil, inputerr.New("no data rows (the file is empty)")
	}
	if err != nil {
		return nil, csvError(err)
	}
	columns := make([]string, len(header))
	for i, h := range header {
		columns[i] = strings.TrimSpace(h)
	}
	ti, vi, ki, err := findColumns(columns, opt)
	if err != nil {
		return nil, err
	}
	n := bytes.Count(data, []byte{'\n'})
	rows := newRows(columns, opt, n)
	keys := make([]*keyEncoder, len(ki))
	for k := range keys {
		keys[k] = newKeyEncoder(n)
	}
	var td timeDecoder
	td.periods = rows.Periods
	line := func(field int) int { l, _ := cr.FieldPos(field); return l }
	for {
		rec, err := cr.Read()
		if err == io.EOF {
			break
		}
		if err != nil {
			return nil, csvError(err)
		}
		p, err := td.parse(rec[ti])
		if err != nil {
			return nil, wrapAt("line", line(ti), opt.Time, err)
		}
		v, err := parseValue(rec[vi])
		if err != nil {
			return nil, wrapAt("line", line(vi), opt.Value, err)
		}
		td.periods = append(td.periods, p)
		rows.Values = append(rows.Values, v)
		for k, enc := range keys {
			s := rec[ki[k]]
			if s == "" {
				return nil, inputerr.New("line %d: key column %q is empty", line(ki[k]), opt.Keys[k])
			}
			enc.codes = append(enc.codes, enc.code(s))
		}
	}
	rows.Periods = td.periods
	rows.N = len(rows.Values)
	if rows.N == 0 {
		return nil, inputerr.New("no data rows (the file has only a header)")
	}
	for k, enc := range keys {
		rows.KeyCodes[k], rows.KeyDict[k] = enc.codes, enc.dict
	}
	return rows, nil
}

func csvError(err error) error {
	var pe *csv.ParseError
	if errors.As(err, &pe) {
		return inputerr.New("not a valid CSV file: line %d: %v", pe.Line, pe.Err)
	}
	return inputerr.New("not a valid CSV file: %v", err)
}

// parseValue reads a sales value with strconv.ParseFloat; surrounding
// blanks are allowed, NaN and infinities are not.
func parseValue(s string) (float64, error) {
	v, err := strconv.ParseFloat(s, 64)
	if err != nil {
		if t := strings.TrimSpace(s); t != s {
			v, err = strconv.ParseFloat(t, 64)
		}
	}
	switch {
	case err != nil && strings.TrimSpace(s) == "":
		return 0, inputerr.New("empty value")
	case errors.Is(err, strconv.ErrRange):
		return 0, inputerr.New("value %q is out of range", s)
	case err != nil:
		return 0, inputerr.New("value %q is not a number", s)
	case math.IsNaN(v) || math.IsInf(v, 0):
		return 0, inputerr.New("value %q is not a finite number", s)
	}
	return v, nil
}

// wrapAt puts a position (row or line number) and a column in front of err.
func wrapAt(unit string, n int, column string, err error) error {
	return inputerr.New("%s %d: column %q: %v", unit, n, column, err)
}
