package tableio

import (
	"encoding/csv"
	"fmt"
	"io"
	"math"
	"strconv"

	"github.com/apache/arrow-go/v18/arrow"
	"github.com/apache/arrow-go/v18/arrow/array"
	"github.com/apache/arrow-go/v18/arrow/ipc"
	"github.com/apache/arrow-go/v18/arrow/memory"
	"github.com/apache/arrow-go/v18/parquet"
	"github.com/apache/arrow-go/v18/parquet/compress"
	"github.com/apache/arrow-go/v18/parquet/file"
	"github.com/apache/arrow-go/v18/parquet/schema"
)

// WriteTable writes t to path in format f, atomically (see
// WriteFileAtomic). Null entries and NaN floats become nulls: Parquet and
// Arrow nulls, empty CSV fields. Parquet output is Snappy-compressed and
// carries no timestamps, so the same table always gives the same bytes.
// CSV text that a spreadsheet would run as a formula gets a leading
// single quote (see csvtext.go; WriteTableWith can turn that off).
//
// A table whose columns disagree in length or type is a programmer error,
// reported as an error before anything is written.
func WriteTable(path string, t *Table, f Format) error {
	return WriteTableWith(path, t, f, WriteOptions{})
}

// WriteOptions are the settings of WriteTableWith; the zero value gives
// WriteTable.
type WriteOptions struct {
	// VerbatimCSV writes CSV text cells and column names exactly as they
	// are, without the leading quote that keeps a spreadsheet from
	// running "=...", "+...", "-..." or "@..." as a formula. For programs
	// that read the text as it is; ReadTable would take the first quote
	// off a cell that starts with a quote and one of those characters.
	VerbatimCSV bool
}

// WriteTableWith is WriteTable with options.
func WriteTableWith(path string, t *Table, f Format, opt WriteOptions) error {
	n, err := checkTable(t)
	if err != nil {
		return fmt.Errorf("write %s: %w", path, err)
	}
	var write func(io.Writer) error
	switch f {
	case CSV:
		text := protectCSV
		if opt.VerbatimCSV {
			text = func(s string) string { return s }
		}
		write = func(w io.Writer) error { return writeCSV(w, t, n, text) }
	case Parquet:
		write = func(w io.Writer) error { return writeParquet(w, t, n) }
	case Arrow:
		write = func(w io.Writer) error { return writeIPC(w, t, n) }
	default:
		return fmt.Errorf("write %s: unknown format %q", path, f)
	}
	return writeAtomic(path, write)
}

// checkTable returns the common column length, or an error if columns
// differ in length, use the wrong slice for their type, or repeat a name.
func checkTable(t *Table) (int, error) {
	if t == nil || len(t.Columns) == 0 {
		return 0, fmt.Errorf("table has no columns")
	}
	n := -1
	seen := map[string]bool{}
	for _, c := range t.Columns {
		if c.Name == "" || seen[c.Name] {
			return 0, fmt.Errorf("column name %q is empty or repeated", c.Name)
		}
		seen[c.Name] = true
		var m, other int
		switch c.Type {
		case String:
			m, other = len(c.Strings), len(c.Floats)+len(c.Ints)
		case Float64:
			m, other = len(c.Floats), len(c.Strings)+len(c.Ints)
		case Int64, Date, Bool:
			m, other = len(c.Ints), len(c.Strings)+len(c.Floats)
		default:
			return 0, fmt.Errorf("column %q: unknown type %d", c.Name, c.Type)
		}
		if other != 0 {
			return 0, fmt.Errorf("column %q: values stored in a slice that does not match its type", c.Name)
		}
		if n < 0 {
			n = m
		}
		if m != n {
			return 0, fmt.Errorf("column %q has %d entries, column %q has %d", c.Name, m, t.Columns[0].Name, n)
		}
		if c.Null != nil && len(c.Null) != n {
			return 0, fmt.Errorf("column %q: %d null flags for %d entries", c.Name, len(c.Null), n)
		}
	}
	return n, nil
}

// isNull reports whether entry i of c is written as null.
func (c *Column) isNull(i int) bool {
	if c.Null != nil && c.Null[i] {
		return true
	}
	return c.Type == Float64 && math.IsNaN(c.Floats[i])
}

// writeCSV writes t as CSV, passing every column name and text cell
// through text.
func writeCSV(w io.Writer, t *Table, n int, text func(string) string) error {
	cw := csv.NewWriter(w)
	rec := make([]string, len(t.Columns))
	for j, c := range t.Columns {
		rec[j] = text(c.Name)
	}
	if err := cw.Write(rec); err != nil {
		return err
	}
	buf := make([]byte, 0, 32)
	for i := 0; i < n; i++ {
		for j := range t.Columns {
			c := &t.Columns[j]
			switch {
			case c.isNull(i):
				rec[j] = ""
			case c.Type == String:
				rec[j] = text(c.Strings[i])
			case c.Type == Float64:
				rec[j] = string(appendCSVFloat(buf[:0], c.Floats[i]))
			case c.Type == Date:
				rec[j] = Period{Day, int(c.Ints[i])}.String()
			case c.Type == Bool:
				rec[j] = strconv.FormatBool(c.Ints[i] != 0)
			default:
				rec[j] = strconv.FormatInt(c.Ints[i], 10)
			}
		}
		if err := cw.Write(rec); err != nil {
			return err
		}
	}
	cw.Flush()
	return cw.Error()
}

// record converts t to one Arrow record batch.
func record(t *Table, n int) arrow.RecordBatch {
	mem := memory.DefaultAllocator
	fields := make([]arrow.Field, len(t.Columns))
	cols := make([]arrow.Array, len(t.Columns))
	valid := make([]bool, n)
	for j := range t.Columns {
		c := &t.Columns[j]
		for i := range valid {
			valid[i] = !c.isNull(i)
		}
		switch c.Type {
		case String:
			b := array.NewStringBuilder(mem)
			b.AppendValues(c.Strings, valid)
			cols[j] = b.NewArray()
			b.Release()
			fields[j] = arrow.Field{Name: c.Name, Type: arrow.BinaryTypes.String, Nullable: true}
		case Float64:
			b := array.NewFloat64Builder(mem)
			b.AppendValues(c.Floats, valid)
			cols[j] = b.NewArray()
			b.Release()
			fields[j] = arrow.Field{Name: c.Name, Type: arrow.PrimitiveTypes.Float64, Nullable: true}
		case Date:
			b := array.NewDate32Builder(mem)
			for i, v := range c.Ints {
				if valid[i] {
					b.Append(arrow.Date32(v))
				} else {
					b.AppendNull()
				}
			}
			cols[j] = b.NewArray()
			b.Release()
			fields[j] = arrow.Field{Name: c.Name, Type: arrow.FixedWidthTypes.Date32, Nullable: true}
		case Bool:
			b := array.NewBooleanBuilder(mem)
			for i, v := range c.Ints {
				if valid[i] {
					b.Append(v != 0)
				} else {
					b.AppendNull()
				}
			}
			cols[j] = b.NewArray()
			b.Release()
			fields[j] = arrow.Field{Name: c.Name, Type: arrow.FixedWidthTypes.Boolean, Nullable: true}
		default:
			b := array.NewInt64Builder(mem)
			b.AppendValues(c.Ints, valid)
			cols[j] = b.NewArray()
			b.Release()
			fields[j] = arrow.Field{Name: c.Name, Type: arrow.PrimitiveTypes.Int64, Nullable: true}
		}
	}
	rec := array.NewRecordBatch(arrow.NewSchema(fields, nil), cols, int64(n))
	for _, a := range cols {
		a.Release()
	}
	return rec
}

// rowGroupRows bounds Parquet row groups so that readers can stream a large
// output a piece at a time (one Mi rows is common practice).
const rowGroupRows = 1 << 20

// writeParquet writes t with parquet/file's column chunk writers: every
// column optional (nulls as definition level 0), text as UTF-8 String,
// Date as INT32 DATE, Bool as BOOLEAN, dictionary pages where they pay, Snappy pages. The
// file carries no timestamps, so the same table gives the same bytes.
func writeParquet(w io.Writer, t *Table, n int) error {
	fields := make(schema.FieldList, len(t.Columns))
	for j := range t.Columns {
		c := &t.Columns[j]
		var err error
		switch c.Type {
		case String:
			fields[j], err = schema.NewPrimitiveNodeLogical(c.Name, parquet.Repetitions.Optional, schema.StringLogicalType{}, parquet.Types.ByteArray, -1, -1)
		case Float64:
			fields[j], err = schema.NewPrimitiveNode(c.Name, parquet.Repetitions.Optional, parquet.Types.Double, -1, -1)
		case Int64:
			fields[j], err = schema.NewPrimitiveNode(c.Name, parquet.Repetitions.Optional, parquet.Types.Int64, -1, -1)
		case Bool:
			fields[j], err = schema.NewPrimitiveNode(c.Name, parquet.Repetitions.Optional, parquet.Types.Boolean, -1, -1)
		default: // Date
			fields[j], err = schema.NewPrimitiveNodeLogical(c.Name, parquet.Repetitions.Optional, schema.DateLogicalType{}, parquet.Types.Int32, -1, -1)
		}
		if err != nil {
			return err
		}
	}
	root, err := schema.NewGroupNode("schema", parquet.Repetitions.Required, fields, -1)
	if err != nil {
		return err
	}
	opts := []parquet.WriterProperty{
		parquet.WithCompression(compress.Codecs.Snappy),
		parquet.WithDictionaryDefault(true),
		parquet.WithMaxRowGroupLength(rowGroupRows),
	}
	for _, c := range t.Columns {
		if c.Type == Bool || !dictionaryFits(c) { // no dictionary for BOOLEAN
			opts = append(opts, parquet.WithDictionaryFor(c.Name, false))
		}
	}
	props := parquet.NewWriterProperties(opts...)
	fw, err := file.NewParquetWriterWithError(w, root, file.WithWriterProps(props))
	if err != nil {
		return err
	}
	for lo := 0; ; lo += rowGroupRows { // an empty table gets one empty row group
		hi := min(n, lo+rowGroupRows)
		if err := writeRowGroup(fw, t, lo, hi); err != nil {
			fw.Close()
			return err
		}
		if hi == n {
			break
		}
	}
	return fw.Close()
}

// dictionaryFits reports whether the distinct values of c fit in one
// dictionary page (parquet.DefaultDictionaryPageSizeLimit bytes, counted
// as arrow-go's dictionary encoder stores them). A column whose values do
// not fit is written without a dictionary: once a dictionary outgrows its
// page, arrow-go falls back to plain pages and records the column chunk's
// page encodings from a Go map, in an order that changes from run to run,
// so the same table would not give the same bytes. Every row group's
// values are among the whole column's, so a column that fits here never
// falls back.
func dictionaryFits(c Column) bool {
	limit := int(parquet.DefaultDictionaryPageSizeLimit)
	size := 0
	switch c.Type {
	case String:
		seen := map[string]bool{}
		for _, v := range c.Strings {
			if !seen[v] {
				seen[v] = true
				if size += 4 + len(v); size > limit {
					return false
				}
			}
		}
	case Float64:
		seen := map[uint64]bool{}
		for _, v := range c.Floats {
			if b := math.Float64bits(v); !seen[b] {
				seen[b] = true
				if size += 8; size > limit {
					return false
				}
			}
		}
	default: // Int64, and Date held as days
		seen := map[int64]bool{}
		for _, v := range c.Ints {
			if !seen[v] {
				seen[v] = true
				if size += 8; size > limit {
					return false
				}
			}
		}
	}
	return true
}

// writeRowGroup writes rows lo to hi of t as one row group.
func writeRowGroup(fw *file.Writer, t *Table, lo, hi int) error {
	rg, err := fw.AppendRowGroupChecked()
	if err != nil {
		return err
	}
	def := make([]int16, hi-lo)
	for j := range t.Columns {
		c := &t.Columns[j]
		for i := range def {
			def[i] = 1
			if c.isNull(lo + i) {
				def[i] = 0
			}
		}
		cw, err := rg.NextColumn()
		if err != nil {
			return err
		}
		switch c.Type {
		case String:
			v := make([]parquet.ByteArray, 0, hi-lo)
			for i := lo; i < hi; i++ {
				if def[i-lo] == 1 {
					v = append(v, parquet.ByteArray(c.Strings[i]))
				}
			}
			_, err = cw.(*file.ByteArrayColumnChunkWriter).WriteBatch(v, def, nil)
		case Float64:
			v := make([]float64, 0, hi-lo)
			for i := lo; i < hi; i++ {
				if def[i-lo] == 1 {
					v = append(v, c.Floats[i])
				}
			}
			_, err = cw.(*file.Float64ColumnChunkWriter).WriteBatch(v, def, nil)
		case Int64:
			v := make([]int64, 0, hi-lo)
			for i := lo; i < hi; i++ {
				if def[i-lo] == 1 {
					v = append(v, c.Ints[i])
				}
			}
			_, err = cw.(*file.Int64ColumnChunkWriter).WriteBatch(v, def, nil)
		case Bool:
			v := make([]bool, 0, hi-lo)
			for i := lo; i < hi; i++ {
				if def[i-lo] == 1 {
					v = append(v, c.Ints[i] != 0)
				}
			}
			_, err = cw.(*file.BooleanColumnChunkWriter).WriteBatch(v, def, nil)
		default: // Date
			v := make([]int32, 0, hi-lo)
			for i := lo; i < hi; i++ {
				if def[i-lo] == 1 {
					v = append(v, int32(c.Ints[i]))
				}
			}
			_, err = cw.(*file.Int32ColumnChunkWriter).WriteBatch(v, def, nil)
		}
		if err != nil {
			return err
		}
		if err := cw.Close(); err != nil {
			return err
		}
	}
	return rg.Close()
}

func writeIPC(w io.Writer, t *Table, n int) error {
	rec := record(t, n)
	defer rec.Release()
	fw, err := ipc.NewFileWriter(w, ipc.WithSchema(rec.Schema()))
	if err != nil {
		return err
	}
	if err := fw.Write(rec); err != nil {
		fw.Close()
		return err
	}
	return fw.Close()
}

// appendCSVFloat appends the shortest text that parses back to the same
// float64, in plain decimal notation (3783451.25, not 3.78345125e+06) so
// that spreadsheets and readers show amounts as amounts; only magnitudes
// outside [1e-6, 1e21) use an exponent.
func appendCSVFloat(dst []byte, x float64) []byte {
	if a := math.Abs(x); x == 0 || (a >= 1e-6 && a < 1e21) {
		return strconv.AppendFloat(dst, x, 'f', -1, 64)
	}
	return strconv.AppendFloat(dst, x, 'g', -1, 64)
}
