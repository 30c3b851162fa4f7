package tableio

import (
	"bytes"
	"fmt"
	"math"
	"os"
	"strconv"
	"strings"
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
	cr, err := newCSVReader(bytes.TrimPrefix(data, []byte("\xef\xbb\xbf")), 0)
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
	n := int(pf.r.NumRows())
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
				return each(def, rows, func(k int) error { c.Strings = append(c.Strings, string(v[k])); return nil })
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
					c.Strings = append(c.Strings, t.Format(time.RFC3339Nano))
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
	case typ.ID() == arrow.DATE32 || typ.ID() == arrow.DATE64:
		c.Type, c.Ints = Date, make([]int64, 0, n)
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
	default: // Int64, Date
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
		c.Ints = append(c.Ints, int64(a.Value(k)))
	case *array.Date64:
		c.Ints = append(c.Ints, int64(floorDiv(int(a.Value(k)), msPerDay)))
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
