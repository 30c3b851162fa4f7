package tableio

import (
	"bytes"
	"fmt"
	"math"
	"os"
	"strconv"
	"time"

	"github.com/apache/arrow-go/v18/arrow"
	"github.com/apache/arrow-go/v18/arrow/array"
	"github.com/apache/arrow-go/v18/arrow/decimal128"
	"github.com/apache/arrow-go/v18/arrow/ipc"
	"github.com/apache/arrow-go/v18/arrow/memory"
	"github.com/apache/arrow-go/v18/parquet"

	"trueup/inputerr"
)

// ReadTable reads a whole table in format f (an empty f means: by file
// name extension). Text columns become String, integer columns Int64,
// floating-point or decimal columns Float64 and dates (Parquet DATE, Arrow
// date32 and date64) Date; timestamps become String in RFC 3339 form.
// Nulls are marked in Column.Null (nil when a column has none); a null
// float also holds NaN.
//
// CSV has no types: a column is Float64 when every non-empty field parses
// with strconv.ParseFloat, String otherwise, and empty fields are null.
// Column names and text cells lose the quote WriteTable puts before text
// a spreadsheet would run as a formula (see csvtext.go).
func ReadTable(path string, f Format) (*Table, error) {
	f, err := formatOf(path, f)
	if err != nil {
		return nil, err
	}
	data, err := os.ReadFile(path)
	if err != nil {
		return nil, &inputerr.Error{File: path, Msg: "cannot read", Err: unwrapPath(err)}
	}
	var t *Table
	switch f {
	case CSV:
		t, err = readTableCSV(data)
	case Parquet:
		t, err = readTableParquet(data)
	default:
		t, err = readTableIPC(data)
	}
	if err != nil {
		return nil, fmt.Errorf("read %s: %w", path, err)
	}
	return t, nil
}

func readTableCSV(data []byte) (*Table, error) {
	if len(data) == 0 {
		return nil, inputerr.New("the file is empty")
	}
	if bytes.IndexByte(data[:min(len(data), 1<<16)], 0) >= 0 {
		return nil, inputerr.New("not a CSV text file (it contains NUL bytes)")
	}
	data = bytes.TrimPrefix(data, []byte("\xef\xbb\xbf"))
	t, ok := readTablePlainCSV(data)
	if !ok {
		var err error
		if t, err = readTableCSVRecords(data); err != nil {
			return nil, err
		}
	}
	unprotectTable(t)
	return t, nil
}

// readTableCSVRecords is readTableCSV through encoding/csv, for any file.
func readTableCSVRecords(data []byte) (*Table, error) {
	cr, err := newCSVReader(data, 0)
	if err != nil {
		return nil, err
	}
	recs, err := cr.ReadAll()
	if err != nil {
		return nil, csvError(err)
	}
	if len(recs) == 0 {
		return nil, inputerr.New("the file is empty")
	}
	header, body := recs[0], recs[1:]
	t := &Table{Columns: make([]Column, len(header))}
	for j, name := range header {
		c := Column{Name: name, Type: Float64}
		for _, r := range body {
			if s := r[j]; s != "" {
				if _, err := strconv.ParseFloat(s, 64); err != nil {
					c.Type = String
					break
				}
			}
		}
		if c.Type == Float64 {
			c.Floats = make([]float64, len(body))
		} else {
			c.Strings = make([]string, len(body))
		}
		var in interner
		for i, r := range body {
			s := r[j]
			if s == "" {
				setNull(&c, i, len(body))
				continue
			}
			if c.Type == String {
				c.Strings[i] = in.str(s)
				continue
			}
			v, _ := strconv.ParseFloat(s, 64)
			c.Floats[i] = v
			if math.IsNaN(v) {
				setNull(&c, i, len(body))
			}
		}
		t.Columns[j] = c
	}
	return t, nil
}

// readTablePlainCSV is readTableCSV for the common file that has no
// quotes and no carriage return except in CRLF line ends: there every
// line is a record and every separator splits fields, so the file is
// read in one pass over its bytes, with no string per record or per
// numeric field. It reports false, having read nothing, for any other
// file, or when a line has a different number of fields from the header
// (encoding/csv then reads the file, and words the error).
func readTablePlainCSV(data []byte) (*Table, bool) {
	if bytes.IndexByte(data, '"') >= 0 {
		return nil, false
	}
	if cr := bytes.Count(data, []byte{'\r'}); cr > 0 {
		crlf := bytes.Count(data, []byte("\r\n"))
		if cr != crlf && !(cr == crlf+1 && data[len(data)-1] == '\r') {
			return nil, false
		}
	}
	comma := byte(detectComma(data))
	// next returns the next non-empty line (without its line end) and the
	// rest, as encoding/csv skips empty lines and drops \r before \n or
	// at the end of the file.
	next := func(rest []byte) (line, after []byte) {
		for len(rest) > 0 {
			i := bytes.IndexByte(rest, '\n')
			if i < 0 {
				line, rest = rest, nil
			} else {
				line, rest = rest[:i], rest[i+1:]
			}
			line = bytes.TrimSuffix(line, []byte{'\r'})
			if len(line) > 0 {
				return line, rest
			}
		}
		return nil, nil
	}
	header, body := next(data)
	if header == nil {
		return nil, false
	}
	names := bytes.Split(header, []byte{comma})
	nc := len(names)
	n := bytes.Count(body, []byte{'\n'}) + 1
	// A column's type is guessed from its first non-empty field, which
	// sizes one slice for it; the leading empty fields (nulls) are only
	// counted until then.
	type col struct {
		c     Column
		in    interner
		typed bool
		lead  int
	}
	cols := make([]col, nc)
	for j, name := range names {
		cols[j].c = Column{Name: string(name), Type: Float64}
	}
	// toString turns column j, numeric for its first rows rows, into a
	// String column by reading those rows' text again.
	toString := func(j, rows int) {
		c := &cols[j].c
		c.Type, c.Floats, c.Strings = String, nil, make([]string, 0, n)
		rest := body
		for r := 0; r < rows; r++ {
			var line []byte
			line, rest = next(rest)
			f := line
			for q := 0; q < j; q++ {
				f = f[bytes.IndexByte(f, comma)+1:]
			}
			if e := bytes.IndexByte(f, comma); e >= 0 {
				f = f[:e]
			}
			c.Strings = append(c.Strings, cols[j].in.bytes(f))
			if c.Null != nil { // NaN was null as a number, not as text
				c.Null[r] = len(f) == 0
			}
		}
	}
	rows := 0
	for rest := body; ; rows++ {
		var line []byte
		if line, rest = next(rest); line == nil {
			break
		}
		for j := 0; j < nc; j++ {
			var f []byte
			if e := bytes.IndexByte(line, comma); e >= 0 {
				if j == nc-1 {
					return nil, false // more fields than the header
				}
				f, line = line[:e], line[e+1:]
			} else {
				if j != nc-1 {
					return nil, false // fewer fields than the header
				}
				f = line
			}
			cj := &cols[j]
			c := &cj.c
			if len(f) == 0 {
				if !cj.typed {
					cj.lead++
					if c.Null == nil {
						c.Null = make([]bool, n)
					}
					c.Null[rows] = true
					continue
				}
				c.appendZero()
				setNull(c, rows, n)
				continue
			}
			if !cj.typed {
				cj.typed = true
				if _, err := strconv.ParseFloat(string(f), 64); err == nil {
					c.Floats = make([]float64, cj.lead, n)
					for i := range c.Floats {
						c.Floats[i] = math.NaN()
					}
				} else {
					c.Type, c.Strings = String, make([]string, cj.lead, n)
				}
			}
			if c.Type == Float64 {
				// string(f) of a short field does not allocate: it
				// does not outlive the call.
				v, err := strconv.ParseFloat(string(f), 64)
				if err == nil {
					c.Floats = append(c.Floats, v)
					if math.IsNaN(v) {
						setNull(c, rows, n)
					}
					continue
				}
				toString(j, rows)
			}
			c.Strings = append(c.Strings, cols[j].in.bytes(f))
		}
	}
	t := &Table{Columns: make([]Column, nc)}
	for j := range cols {
		c := cols[j].c
		if !cols[j].typed { // every field empty: all null numbers
			c.Floats = make([]float64, rows)
			for i := range c.Floats {
				c.Floats[i] = math.NaN()
			}
		}
		if c.Null != nil {
			c.Null = c.Null[:rows:rows]
		}
		t.Columns[j] = c
	}
	return t, true
}

// timestampText writes a timestamp as RFC 3339 text: with its zone when
// it is an instant, and without one when it is a local date-time (a
// Parquet timestamp not adjusted to UTC, an Arrow timestamp without a
// zone), so that the period reader dates both as Read does.
func timestampText(t time.Time, instant bool) string {
	if instant {
		return t.Format(time.RFC3339Nano)
	}
	return t.Format("2006-01-02T15:04:05.999999999")
}

// orUTC is loc, or UTC when loc is nil.
func orUTC(loc *time.Location) *time.Location {
	if loc == nil {
		return time.UTC
	}
	return loc
}

func setNull(c *Column, i, n int) {
	if c.Null == nil {
		c.Null = make([]bool, n)
	}
	// A damaged Parquet file may claim fewer rows than it holds.
	for len(c.Null) <= i {
		c.Null = append(c.Null, false)
	}
	c.Null[i] = true
	if c.Type == Float64 {
		c.Floats[i] = math.NaN()
	}
}

func readTableParquet(data []byte) (*Table, error) {
	pf, err := openParquet(data)
	if err != nil {
		return nil, err
	}
	defer pf.r.Close()
	rows := pf.r.NumRows()
	if rows < 0 {
		return nil, inputerr.New("not a readable Parquet file (it claims %d rows)", rows)
	}
	// The claimed row count only sizes the buffers, capped by the file's
	// size so that a damaged footer cannot ask for more than memory holds.
	n := int(min(rows, int64(len(data))))
	t := &Table{}
	for j := range pf.columns {
		pc, err := pf.column(j)
		if err != nil {
			return nil, err
		}
		c := Column{Name: pc.name}
		if err := readParquetColumn(pf, pc, &c, n); err != nil {
			return nil, err
		}
		length := len(c.Strings) + len(c.Ints) + len(c.Floats)
		if c.Null != nil { // sized by the claimed row count: make it fit
			for len(c.Null) < length {
				c.Null = append(c.Null, false)
			}
			c.Null = c.Null[:length]
		}
		if j > 0 && length != len(t.Columns[0].Strings)+len(t.Columns[0].Ints)+len(t.Columns[0].Floats) {
			return nil, inputerr.New("not a readable Parquet file (column %q has a different number of rows from column %q)", c.Name, t.Columns[0].Name)
		}
		t.Columns = append(t.Columns, c)
	}
	return t, nil
}

// readParquetColumn reads every row of a Parquet column into c, choosing
// c.Type as ReadTable documents.
func readParquetColumn(pf *pqFile, pc *pqColumn, c *Column, n int) error {
	switch pc.kind {
	case pqText, pqBool, pqTimestamp, pqInt96:
		c.Type, c.Strings = String, make([]string, 0, n)
	case pqInt32, pqUint32, pqInt64, pqUint64:
		c.Type, c.Ints = Int64, make([]int64, 0, n)
	case pqDate:
		c.Type, c.Ints = Date, make([]int64, 0, n)
	case pqFloat32, pqFloat64, pqDecimal:
		c.Type, c.Floats = Float64, make([]float64, 0, n)
	default:
		return inputerr.New("column %q has Parquet type %s, which trueup does not read", pc.name, pc.typeName())
	}
	b := &pf.bufs
	maxDef := pc.desc.MaxDefinitionLevel()
	var in interner // one string per distinct text, not per cell
	row0 := 0
	for g := 0; g < pf.r.NumRowGroups(); g++ {
		// each spreads the batch's values over its rows, marking nulls.
		each := func(def []int16, rows int, put func(k int) error) error {
			k := 0
			for i := 0; i < rows; i++ {
				if def != nil && def[i] < maxDef {
					c.appendZero()
					setNull(c, len(c.Strings)+len(c.Floats)+len(c.Ints)-1, n)
					continue
				}
				if err := put(k); err != nil {
					return err
				}
				k++
			}
			return nil
		}
		var err error
		switch pc.kind {
		case pqText:
			err = scan(pf, g, pc, row0, &b.bytes, func(v []parquet.ByteArray, def []int16, rows, _ int) error {
				return each(def, rows, func(k int) error { c.Strings = append(c.Strings, in.bytes(v[k])); return nil })
			})
		case pqBool:
			err = scan(pf, g, pc, row0, &b.bools, func(v []bool, def []int16, rows, _ int) error {
				return each(def, rows, func(k int) error { c.Strings = append(c.Strings, strconv.FormatBool(v[k])); return nil })
			})
		case pqTimestamp:
			perSec := pc.perDay / 86400
			err = scan(pf, g, pc, row0, &b.int64s, func(v []int64, def []int16, rows, _ int) error {
				return each(def, rows, func(k int) error {
					sec := int64(floorDiv(int(v[k]), int(perSec)))
					t := time.Unix(sec, (v[k]-sec*perSec)*(1e9/perSec)).In(orUTC(pc.zone))
					c.Strings = append(c.Strings, timestampText(t, pc.zone != nil || pc.utc))
					return nil
				})
			})
		case pqInt96:
			err = scan(pf, g, pc, row0, &b.int96s, func(v []parquet.Int96, def []int16, rows, _ int) error {
				return each(def, rows, func(k int) error {
					c.Strings = append(c.Strings, v[k].ToTime().UTC().Format(time.RFC3339Nano))
					return nil
				})
			})
		case pqInt32, pqUint32, pqDate:
			unsigned := pc.kind == pqUint32
			err = scan(pf, g, pc, row0, &b.int32s, func(v []int32, def []int16, rows, _ int) error {
				return each(def, rows, func(k int) error {
					if unsigned {
						c.Ints = append(c.Ints, int64(uint32(v[k])))
					} else {
						c.Ints = append(c.Ints, int64(v[k]))
					}
					return nil
				})
			})
		case pqInt64, pqUint64:
			unsigned := pc.kind == pqUint64
			err = scan(pf, g, pc, row0, &b.int64s, func(v []int64, def []int16, rows, row int) error {
				return each(def, rows, func(k int) error {
					if unsigned && v[k] < 0 {
						return rowErr(row+len(c.Ints), pc.name, "value %d does not fit a signed 64-bit integer", uint64(v[k]))
					}
					c.Ints = append(c.Ints, v[k])
					return nil
				})
			})
		case pqFloat32:
			err = scan(pf, g, pc, row0, &b.float32, func(v []float32, def []int16, rows, _ int) error {
				return each(def, rows, func(k int) error { c.Floats = append(c.Floats, float64(v[k])); return nil })
			})
		case pqFloat64:
			err = scan(pf, g, pc, row0, &b.float64, func(v []float64, def []int16, rows, _ int) error {
				return each(def, rows, func(k int) error { c.Floats = append(c.Floats, v[k]); return nil })
			})
		default: // pqDecimal
			err = readTableDecimals(pf, g, pc, c, row0, each)
		}
		if err != nil {
			return err
		}
		row0 += int(pf.r.RowGroup(g).NumRows())
	}
	return nil
}

// readTableDecimals is readParquetColumn for DECIMAL columns.
func readTableDecimals(pf *pqFile, g int, pc *pqColumn, c *Column, row0 int,
	each func(def []int16, rows int, put func(k int) error) error) error {
	b := &pf.bufs
	put := func(f float64, ok bool, row int, size int) error {
		if !ok {
			return rowErr(row, pc.name, "decimal of %d bytes is not readable", size)
		}
		c.Floats = append(c.Floats, f)
		return nil
	}
	switch pc.desc.PhysicalType() {
	case parquet.Types.Int32:
		return scan(pf, g, pc, row0, &b.int32s, func(v []int32, def []int16, rows, _ int) error {
			return each(def, rows, func(k int) error {
				return put(decimal128.FromI64(int64(v[k])).ToFloat64(pc.scale), true, 0, 4)
			})
		})
	case parquet.Types.Int64:
		return scan(pf, g, pc, row0, &b.int64s, func(v []int64, def []int16, rows, _ int) error {
			return each(def, rows, func(k int) error {
				return put(decimal128.FromI64(v[k]).ToFloat64(pc.scale), true, 0, 8)
			})
		})
	case parquet.Types.FixedLenByteArray:
		return scan(pf, g, pc, row0, &b.fixed, func(v []parquet.FixedLenByteArray, def []int16, rows, row int) error {
			return each(def, rows, func(k int) error {
				f, ok := decimalFromBytes(v[k], pc.scale)
				return put(f, ok, row, len(v[k]))
			})
		})
	default:
		return scan(pf, g, pc, row0, &b.bytes, func(v []parquet.ByteArray, def []int16, rows, row int) error {
			return each(def, rows, func(k int) error {
				f, ok := decimalFromBytes(v[k], pc.scale)
				return put(f, ok, row, len(v[k]))
			})
		})
	}
}

func readTableIPC(data []byte) (*Table, error) {
	var (
		sc     *arrow.Schema
		chunks [][]arrow.Array
		n      int
	)
	if err := checkIPCBounds(data); err != nil {
		return nil, inputerr.New("not a valid Arrow IPC file: %v", err)
	}
	err := decode("Arrow IPC", func() error {
		r, err := ipc.NewFileReader(bytes.NewReader(data), ipc.WithAllocator(memory.DefaultAllocator))
		if err != nil {
			return inputerr.New("not a valid Arrow IPC file: %v", err)
		}
		defer r.Close()
		sc = r.Schema()
		chunks = make([][]arrow.Array, sc.NumFields())
		for i := 0; i < r.NumRecords(); i++ {
			rec, err := r.RecordBatch(i)
			if err != nil {
				return inputerr.New("corrupt Arrow IPC record batch %d: %v", i, err)
			}
			for j := range chunks {
				a := rec.Column(j)
				a.Retain() // the reader releases rec at the next call or Close
				chunks[j] = append(chunks[j], a)
			}
			n += int(rec.NumRows())
		}
		return nil
	})
	if err != nil {
		return nil, err
	}
	t := &Table{}
	for j, f := range sc.Fields() {
		c := Column{Name: f.Name}
		// Reading the arrays counts as decoding: a damaged file can make
		// their buffers disagree with their lengths (see readIPC).
		if err := decode("Arrow IPC", func() error { return fromChunks(&c, chunks[j], n) }); err != nil {
			return nil, err
		}
		t.Columns = append(t.Columns, c)
	}
	return t, nil
}

// fromChunks fills c from the Arrow arrays of one column, choosing its
// type from the first chunk's.
func fromChunks(c *Column, chunks []arrow.Array, n int) error {
	var typ arrow.DataType
	if len(chunks) > 0 {
		typ = chunks[0].DataType()
		if d, ok := typ.(*arrow.DictionaryType); ok {
			typ = d.ValueType
		}
	}
	switch {
	case typ == nil:
		c.Type = String
	case arrow.IsInteger(typ.ID()):
		c.Type, c.Ints = Int64, make([]int64, 0, n)
	case typ.ID() == arrow.DATE32 || typ.ID() == arrow.DATE64:
		c.Type, c.Ints = Date, make([]int64, 0, n)
	case arrow.IsFloating(typ.ID()) || arrow.IsDecimal(typ.ID()):
		c.Type, c.Floats = Float64, make([]float64, 0, n)
	default:
		c.Type, c.Strings = String, make([]string, 0, n)
	}
	row := 0
	var in interner // one string per distinct text, not per cell
	for _, a := range chunks {
		for i := 0; i < a.Len(); i++ {
			v := a
			k := i
			if d, ok := a.(*array.Dictionary); ok {
				if d.IsNull(i) {
					v, k = nil, -1
				} else {
					v, k = d.Dictionary(), d.GetValueIndex(i)
				}
			}
			if v == nil || v.IsNull(k) {
				c.appendZero()
				setNull(c, row, n)
				row++
				continue
			}
			if err := c.appendCell(v, k, &in); err != nil {
				return err
			}
			row++
		}
	}
	return nil
}

func (c *Column) appendZero() {
	switch c.Type {
	case String:
		c.Strings = append(c.Strings, "")
	case Float64:
		c.Floats = append(c.Floats, 0)
	default: // Int64, Date
		c.Ints = append(c.Ints, 0)
	}
}

// appendCell appends entry k of a, which is not null; text goes through in.
func (c *Column) appendCell(a arrow.Array, k int, in *interner) error {
	switch a := a.(type) {
	case *array.Float64:
		c.Floats = append(c.Floats, a.Value(k))
	case *array.Float32:
		c.Floats = append(c.Floats, float64(a.Value(k)))
	case *array.Int64:
		c.Ints = append(c.Ints, a.Value(k))
	case *array.Int32:
		c.Ints = append(c.Ints, int64(a.Value(k)))
	case *array.Int16:
		c.Ints = append(c.Ints, int64(a.Value(k)))
	case *array.Int8:
		c.Ints = append(c.Ints, int64(a.Value(k)))
	case *array.Uint32:
		c.Ints = append(c.Ints, int64(a.Value(k)))
	case *array.Uint16:
		c.Ints = append(c.Ints, int64(a.Value(k)))
	case *array.Uint8:
		c.Ints = append(c.Ints, int64(a.Value(k)))
	case *array.Uint64:
		if a.Value(k) > math.MaxInt64 {
			return inputerr.New("column %q: value %d does not fit a signed 64-bit integer", c.Name, a.Value(k))
		}
		c.Ints = append(c.Ints, int64(a.Value(k)))
	case *array.Decimal32:
		c.Floats = append(c.Floats, a.Value(k).ToFloat64(scaleOf(a)))
	case *array.Decimal64:
		c.Floats = append(c.Floats, a.Value(k).ToFloat64(scaleOf(a)))
	case *array.Decimal128:
		c.Floats = append(c.Floats, a.Value(k).ToFloat64(scaleOf(a)))
	case *array.Decimal256:
		c.Floats = append(c.Floats, a.Value(k).ToFloat64(scaleOf(a)))
	case *array.Date32:
		c.Ints = append(c.Ints, int64(a.Value(k)))
	case *array.Date64:
		c.Ints = append(c.Ints, int64(floorDiv(int(a.Value(k)), msPerDay)))
	case *array.Timestamp:
		ts := a.DataType().(*arrow.TimestampType)
		loc, err := zone(ts.TimeZone)
		if err != nil {
			return err
		}
		c.Strings = append(c.Strings, timestampText(a.Value(k).ToTime(ts.Unit).In(orUTC(loc)), ts.TimeZone != ""))
	case stringValuer:
		// A copy (in.str): the value may point into a decoder buffer.
		c.Strings = append(c.Strings, in.str(a.Value(k)))
	case *array.Binary:
		c.Strings = append(c.Strings, string(a.Value(k)))
	case *array.LargeBinary:
		c.Strings = append(c.Strings, string(a.Value(k)))
	case *array.Boolean:
		c.Strings = append(c.Strings, strconv.FormatBool(a.Value(k)))
	default:
		return inputerr.New("column %q has type %s, which trueup does not read", c.Name, a.DataType())
	}
	return nil
}
