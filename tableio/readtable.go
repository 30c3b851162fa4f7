package tableio

import (
	"bytes"
	"context"
	"encoding/csv"
	"fmt"
	"math"
	"os"
	"strconv"
	"strings"
	"time"

	"github.com/apache/arrow-go/v18/arrow"
	"github.com/apache/arrow-go/v18/arrow/array"
	"github.com/apache/arrow-go/v18/arrow/ipc"
	"github.com/apache/arrow-go/v18/arrow/memory"
	"github.com/apache/arrow-go/v18/parquet/pqarrow"

	"trueup/inputerr"
)

// ReadTable reads a whole table in format f (an empty f means: by file
// name extension). Text columns become String, integer columns Int64 and
// floating-point or decimal columns Float64; dates become String in
// 2006-01-02 form. Nulls are marked in Column.Null (nil when a column has
// none); a null float also holds NaN.
//
// CSV has no types: a column is Float64 when every non-empty field parses
// with strconv.ParseFloat, String otherwise, and empty fields are null.
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
	cr := csv.NewReader(bytes.NewReader(bytes.TrimPrefix(data, []byte("\xef\xbb\xbf"))))
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
		for i, r := range body {
			s := r[j]
			if s == "" {
				setNull(&c, i, len(body))
				continue
			}
			if c.Type == String {
				c.Strings[i] = s
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

func setNull(c *Column, i, n int) {
	if c.Null == nil {
		c.Null = make([]bool, n)
	}
	c.Null[i] = true
	if c.Type == Float64 {
		c.Floats[i] = math.NaN()
	}
}

func readTableParquet(data []byte) (*Table, error) {
	var tbl arrow.Table
	err := decode("Parquet", func() (err error) {
		tbl, err = pqarrow.ReadTable(context.Background(), bytes.NewReader(data), nil, pqarrow.ArrowReadProperties{}, memory.DefaultAllocator)
		if err != nil {
			return inputerr.New("not a valid Parquet file: %v", err)
		}
		return nil
	})
	if err != nil {
		return nil, err
	}
	defer tbl.Release()
	t := &Table{}
	for j := 0; j < int(tbl.NumCols()); j++ {
		col := tbl.Column(j)
		c := Column{Name: col.Name()}
		if err := fromChunks(&c, col.Data().Chunks(), int(tbl.NumRows())); err != nil {
			return nil, err
		}
		t.Columns = append(t.Columns, c)
	}
	return t, nil
}

func readTableIPC(data []byte) (*Table, error) {
	var (
		sc     *arrow.Schema
		chunks [][]arrow.Array
		n      int
	)
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
		if err := fromChunks(&c, chunks[j], n); err != nil {
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
	case arrow.IsFloating(typ.ID()) || arrow.IsDecimal(typ.ID()):
		c.Type, c.Floats = Float64, make([]float64, 0, n)
	default:
		c.Type, c.Strings = String, make([]string, 0, n)
	}
	row := 0
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
			if err := c.appendCell(v, k); err != nil {
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
	default:
		c.Ints = append(c.Ints, 0)
	}
}

// appendCell appends entry k of a, which is not null.
func (c *Column) appendCell(a arrow.Array, k int) error {
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
		c.Strings = append(c.Strings, Period{Day, int(a.Value(k))}.String())
	case *array.Date64:
		c.Strings = append(c.Strings, Period{Day, floorDiv(int(a.Value(k)), msPerDay)}.String())
	case *array.Timestamp:
		unit := a.DataType().(*arrow.TimestampType).Unit
		c.Strings = append(c.Strings, a.Value(k).ToTime(unit).Format(time.RFC3339Nano))
	case stringValuer:
		// Clone: the value may point into a decoder buffer.
		c.Strings = append(c.Strings, strings.Clone(a.Value(k)))
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
