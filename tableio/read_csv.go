package tableio

import (
	"bytes"
	"encoding/csv"
	"errors"
	"fmt"
	"io"
	"math"
	"strconv"
	"strings"
	"unicode/utf8"

	"trueup/inputerr"
)

// readCSV reads a CSV file with a header row (RFC 4180 quoting, as
// encoding/csv reads it; CRLF or LF line ends). A leading UTF-8 byte order
// mark is skipped. Column names and keys lose the quote WriteTable puts
// before text a spreadsheet would run as a formula (see csvtext.go). The separator is opt.Comma, or detected from the header
// (see ReadOptions.Comma). With a separator other than ',' a value such as
// 12,5 is read with a decimal comma, as such exports write it.
func readCSV(data []byte, opt ReadOptions) (*Rows, error) {
	// A binary file is told apart early by its first 64 KiB; a NUL (or
	// any control character) in a key further on is refused by
	// CheckKeyText on the key's first appearance, wherever it is.
	if bytes.IndexByte(data[:min(len(data), 1<<16)], 0) >= 0 {
		return nil, inputerr.New("not a CSV text file (it contains NUL bytes)")
	}
	data = bytes.TrimPrefix(data, []byte("\xef\xbb\xbf"))
	cr, err := newCSVReader(data, opt.Comma)
	if err != nil {
		return nil, err
	}
	decimalComma := cr.Comma != ','
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
		columns[i] = unprotectCSV(strings.TrimSpace(h))
	}
	ti, vi, ki, err := findColumns(columns, opt)
	if err != nil {
		return nil, err
	}
	n := bytes.Count(data, []byte{'\n'})
	if err := checkRowMemory(opt, int64(n), "of the file"); err != nil {
		return nil, err
	}
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
			return nil, atLine(line(ti), opt.Time, err)
		}
		v, err := parseValue(rec[vi])
		if err != nil && decimalComma {
			v, err = parseDecimalComma(rec[vi], err)
		}
		if err != nil {
			return nil, atLine(line(vi), opt.Value, err)
		}
		td.periods = append(td.periods, p)
		rows.Values = append(rows.Values, v)
		for k, enc := range keys {
			s := unprotectCSV(rec[ki[k]])
			if s == "" {
				return nil, &inputerr.Error{Line: line(ki[k]), Column: opt.Keys[k], Msg: fmt.Sprintf("key column %q is empty", opt.Keys[k])}
			}
			known := len(enc.dict)
			enc.codes = append(enc.codes, enc.code(s))
			if len(enc.dict) > known {
				if err := CheckKeyText(s); err != nil {
					return nil, atLine(line(ki[k]), opt.Keys[k], err)
				}
			}
		}
	}
	if err := td.finish(opt.TimeKind); err != nil {
		return nil, columnErr(opt.Time, err)
	}
	rows.Periods = td.periods
	if td.note != "" {
		rows.Notes = append(rows.Notes, td.note)
	}
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
		return &inputerr.Error{Line: pe.Line, Msg: "not a valid CSV file", Err: pe.Err}
	}
	return &inputerr.Error{Msg: "not a valid CSV file", Err: err}
}

// newCSVReader returns a reader of data with the separator comma, or with
// the one detected from the header line when comma is zero.
func newCSVReader(data []byte, comma rune) (*csv.Reader, error) {
	if comma == 0 {
		comma = detectComma(data)
	}
	cr := csv.NewReader(bytes.NewReader(data))
	if comma == '\r' || comma == '\n' || comma == '"' || comma == utf8.RuneError || !utf8.ValidRune(comma) {
		return nil, inputerr.ForOption("Comma", "%q cannot separate CSV fields", comma)
	}
	cr.Comma = comma
	return cr, nil
}

// detectComma picks the field separator of a CSV file from its header
// line: the most frequent of ',', ';' and tab outside double quotes, ','
// on a tie with it or when there is none.
func detectComma(data []byte) rune {
	var n [3]int
	quoted := false
	for _, c := range data {
		if c == '"' {
			quoted = !quoted
		}
		if quoted {
			continue
		}
		if c == '\n' {
			break
		}
		switch c {
		case ',':
			n[0]++
		case ';':
			n[1]++
		case '\t':
			n[2]++
		}
	}
	best, comma := n[0], ','
	if n[1] > best {
		best, comma = n[1], ';'
	}
	if n[2] > best {
		comma = '\t'
	}
	return comma
}

// parseDecimalComma reads a value written with a decimal comma (12,5) in
// a file whose fields are not separated by commas. Text without exactly
// one comma, or with a point as well, keeps the error parseValue gave.
func parseDecimalComma(s string, err error) (float64, error) {
	if strings.Count(s, ",") != 1 || strings.Contains(s, ".") {
		return 0, err
	}
	if v, err2 := parseValue(strings.Replace(s, ",", ".", 1)); err2 == nil {
		return v, nil
	}
	return 0, err
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

// atLine places err at a line and column of a CSV file.
func atLine(line int, column string, err error) error {
	return &inputerr.Error{Line: line, Column: column, Err: err}
}

// rowErr is an input error at a data row and column of a Parquet or Arrow
// file.
func rowErr(row int, column, format string, args ...any) error {
	return &inputerr.Error{Row: row, Column: column, Msg: fmt.Sprintf(format, args...)}
}

// atRow places err at a data row and column of a Parquet or Arrow file.
func atRow(row int, column string, err error) error {
	return &inputerr.Error{Row: row, Column: column, Err: err}
}

// columnErr places an input error about a whole column at that column,
// keeping the option it names.
func columnErr(column string, err error) error {
	if e, ok := err.(*inputerr.Error); ok && e.Column == "" {
		e.Column = column
		return e
	}
	return err
}
