package tableio

import (
	"bytes"
	"encoding/base64"
	"encoding/binary"
	"fmt"
	"time"

	"github.com/apache/arrow-go/v18/arrow"
	"github.com/apache/arrow-go/v18/arrow/decimal128"
	"github.com/apache/arrow-go/v18/arrow/decimal256"
	"github.com/apache/arrow-go/v18/arrow/ipc"
	"github.com/apache/arrow-go/v18/arrow/memory"
	"github.com/apache/arrow-go/v18/parquet"
	"github.com/apache/arrow-go/v18/parquet/file"
	"github.com/apache/arrow-go/v18/parquet/metadata"
	"github.com/apache/arrow-go/v18/parquet/schema"

	"trueup/inputerr"
)

// Parquet is read with the column chunk readers of arrow-go's parquet/file
// package, not through its Arrow layer (pqarrow): that layer imports
// Arrow Flight, which brings gRPC and protobuf into every build.

// parquetBatch is the number of values decoded from a column chunk at a
// time.
const parquetBatch = 1 << 16

// pqKind is how a Parquet leaf column is read.
type pqKind int

const (
	pqUnsupported pqKind = iota
	pqText               // BYTE_ARRAY: text (or plain bytes)
	pqBool               // BOOLEAN
	pqInt32              // INT32, signed, including 8- and 16-bit integers
	pqUint32             // INT32 with an unsigned integer logical type
	pqInt64              // INT64, signed
	pqUint64             // INT64 with an unsigned integer logical type
	pqFloat32            // FLOAT
	pqFloat64            // DOUBLE
	pqDate               // INT32 DATE: days since 1970-01-01
	pqTimestamp          // INT64 TIMESTAMP in milli-, micro- or nanoseconds
	pqInt96              // legacy INT96 timestamp
	pqDecimal            // DECIMAL on INT32, INT64, FIXED_LEN_BYTE_ARRAY or BYTE_ARRAY
)

// pqColumn is one flat column of a Parquet file.
type pqColumn struct {
	name   string
	leaf   int // index among the file's leaf columns
	desc   *schema.Column
	kind   pqKind
	scale  int32          // decimal scale
	perDay int64          // timestamp units per day
	zone   *time.Location // timestamp zone from the stored Arrow schema; nil: UTC
	utc    bool           // timestamp adjusted to UTC (an instant, not a local date-time)
}

// isInt reports whether the column holds integers (not dates or decimals).
func (c *pqColumn) isInt() bool {
	return c.kind == pqInt32 || c.kind == pqUint32 || c.kind == pqInt64 || c.kind == pqUint64
}

// typeName describes the column's Parquet type for messages, as the
// Parquet format names it: physical type, then logical type if any.
func (c *pqColumn) typeName() string {
	s := c.desc.PhysicalType().String()
	if lt := c.desc.LogicalType(); lt != nil && !lt.Equals(schema.NoLogicalType{}) {
		s += " " + lt.String()
	}
	return s
}

// classify sets c.kind (and scale or perDay) from the column's physical
// and logical types.
func (c *pqColumn) classify() {
	phys := c.desc.PhysicalType()
	switch lt := c.desc.LogicalType().(type) {
	case schema.DecimalLogicalType:
		switch phys {
		case parquet.Types.Int32, parquet.Types.Int64, parquet.Types.FixedLenByteArray, parquet.Types.ByteArray:
			c.kind, c.scale = pqDecimal, lt.Scale()
		}
		return
	case schema.DateLogicalType:
		if phys == parquet.Types.Int32 {
			c.kind = pqDate
		}
		return
	case schema.TimestampLogicalType:
		if phys == parquet.Types.Int64 {
			c.kind, c.utc = pqTimestamp, lt.IsAdjustedToUTC()
			c.perDay = map[schema.TimeUnitType]int64{
				schema.TimeUnitMillis: 86400e3, schema.TimeUnitMicros: 86400e6, schema.TimeUnitNanos: 86400e9,
			}[lt.TimeUnit()]
			if c.perDay == 0 {
				c.kind = pqUnsupported
			}
		}
		return
	case schema.IntLogicalType:
		switch {
		case phys == parquet.Types.Int32 && lt.IsSigned():
			c.kind = pqInt32
		case phys == parquet.Types.Int32:
			c.kind = pqUint32
		case phys == parquet.Types.Int64 && lt.IsSigned():
			c.kind = pqInt64
		case phys == parquet.Types.Int64:
			c.kind = pqUint64
		}
		return
	case nil, schema.NoLogicalType, schema.StringLogicalType, schema.EnumLogicalType:
	default:
		return // times of day, intervals, UUIDs, float16 and the like
	}
	c.kind = map[parquet.Type]pqKind{
		parquet.Types.ByteArray: pqText, parquet.Types.Boolean: pqBool,
		parquet.Types.Int32: pqInt32, parquet.Types.Int64: pqInt64,
		parquet.Types.Float: pqFloat32, parquet.Types.Double: pqFloat64,
		parquet.Types.Int96: pqInt96,
	}[phys]
}

// pqFile is an open Parquet file with its flat columns by name.
type pqFile struct {
	r       *file.Reader
	columns []string // top-level field names, in file order
	fields  []schema.Node
	sc      *schema.Schema
	zones   map[string]string // time zones of timestamp fields, by name
	bufs    pqBuffers
}

func openParquet(data []byte) (*pqFile, error) {
	var r *file.Reader
	err := decode("Parquet", func() (err error) {
		r, err = file.NewParquetReader(bytes.NewReader(data))
		if err != nil {
			return &inputerr.Error{Msg: "not a valid Parquet file", Err: err}
		}
		return nil
	})
	if err != nil {
		return nil, err
	}
	f := &pqFile{r: r, sc: r.MetaData().Schema, zones: arrowZones(r.MetaData().KeyValueMetadata())}
	root := f.sc.Root()
	for i := 0; i < root.NumFields(); i++ {
		f.fields = append(f.fields, root.Field(i))
		f.columns = append(f.columns, root.Field(i).Name())
	}
	return f, nil
}

// column returns top-level field i as a flat column, or an input error if
// it is nested or repeated.
func (f *pqFile) column(i int) (*pqColumn, error) {
	n := f.fields[i]
	if _, ok := n.(*schema.PrimitiveNode); !ok || n.RepetitionType() == parquet.Repetitions.Repeated {
		return nil, inputerr.New("column %q is nested or repeated; trueup reads flat columns", f.columns[i])
	}
	leaf := f.sc.ColumnIndexByNode(n)
	c := &pqColumn{name: f.columns[i], leaf: leaf, desc: f.sc.Column(leaf)}
	c.classify()
	if tz, ok := f.zones[c.name]; ok && c.kind == pqTimestamp {
		loc, err := zone(tz)
		if err != nil {
			return nil, &inputerr.Error{Column: c.name, Err: err}
		}
		c.zone = loc
	}
	return c, nil
}

// arrowZones returns the time zone of each timestamp field of the Arrow
// schema that Arrow-based writers store in a Parquet file's key-value
// metadata under "ARROW:schema" (an Arrow IPC schema message in base64).
// Parquet itself only says whether a timestamp is adjusted to UTC, so the
// stored schema is the only place the writer's zone survives. Metadata
// that cannot be decoded gives no zones: the timestamps are then dated in
// UTC.
func arrowZones(md metadata.KeyValueMetadata) map[string]string {
	v := md.FindValue("ARROW:schema")
	if v == nil {
		return nil
	}
	raw, err := base64.StdEncoding.DecodeString(*v)
	if err != nil {
		if raw, err = base64.RawStdEncoding.DecodeString(*v); err != nil {
			return nil
		}
	}
	var sc *arrow.Schema
	if decode("Arrow IPC", func() error {
		r, err := ipc.NewReader(bytes.NewReader(raw))
		if err != nil {
			return err
		}
		defer r.Release()
		sc = r.Schema()
		return nil
	}) != nil {
		return nil
	}
	zones := map[string]string{}
	for _, f := range sc.Fields() {
		if ts, ok := f.Type.(*arrow.TimestampType); ok && ts.TimeZone != "" {
			zones[f.Name] = ts.TimeZone
		}
	}
	return zones
}

// pqBuffers holds the decode buffers, reused across column chunks.
type pqBuffers struct {
	def     []int16
	bools   []bool
	int32s  []int32
	int64s  []int64
	int96s  []parquet.Int96
	float32 []float32
	float64 []float64
	bytes   []parquet.ByteArray
	fixed   []parquet.FixedLenByteArray
}

func buffer[T any](p *[]T) []T {
	if len(*p) < parquetBatch {
		*p = make([]T, parquetBatch)
	}
	return *p
}

// batchReader is what parquet/file's typed column chunk readers have in
// common.
type batchReader[T any] interface {
	ReadBatch(batchSize int64, values []T, defLvls, repLvls []int16) (total int64, valuesRead int, err error)
}

// scan reads the n rows of column c in row group g, batch by batch. For
// each batch it calls f with the non-null values, the definition levels
// (nil when the column cannot hold nulls; a level below def's maximum
// marks a null), the number of rows in the batch and the file row number,
// counted from 1, of its first row.
func scan[T any](pf *pqFile, g int, c *pqColumn, row0 int, buf *[]T,
	f func(v []T, def []int16, rows int, row int) error) error {
	var cr file.ColumnChunkReader
	err := decode("Parquet", func() (err error) {
		cr, err = pf.r.RowGroup(g).Column(c.leaf)
		return err
	})
	if err != nil {
		return &inputerr.Error{Column: c.name, Msg: "cannot read the Parquet column", Err: err}
	}
	br, ok := cr.(batchReader[T])
	if !ok {
		panic(fmt.Sprintf("tableio: column %q read as %T", c.name, *buf)) // classify and the caller disagree
	}
	vals := buffer(buf)
	var def []int16
	if c.desc.MaxDefinitionLevel() > 0 {
		def = buffer(&pf.bufs.def)
	}
	n := pf.r.RowGroup(g).NumRows()
	for done := int64(0); done < n; {
		var total int64
		var read int
		err := decode("Parquet", func() (err error) {
			total, read, err = br.ReadBatch(min(parquetBatch, n-done), vals, def, nil)
			return err
		})
		if err == nil && total == 0 {
			err = fmt.Errorf("column chunk ends after %d of %d rows", done, n)
		}
		if err != nil {
			return &inputerr.Error{Row: row0 + int(done) + 1, Column: c.name, Msg: "corrupt Parquet data", Err: err}
		}
		if def == nil {
			read = int(total)
		} else if !levelsAgree(def, int(total), read, c.desc.MaxDefinitionLevel()) {
			return &inputerr.Error{Row: row0 + int(done) + 1, Column: c.name, Msg: "corrupt Parquet data: the null markers and the values disagree"}
		}
		if read > len(vals) || read < 0 {
			return &inputerr.Error{Row: row0 + int(done) + 1, Column: c.name, Msg: "corrupt Parquet data: more values than were asked for"}
		}
		if err := f(vals[:read], def[:min(len(def), int(total))], int(total), row0+int(done)+1); err != nil {
			return err
		}
		done += total
	}
	return nil
}

// levelsAgree reports whether a batch of total rows has as many non-null
// definition levels as values read, as a sound file has.
func levelsAgree(def []int16, total, read int, maxDef int16) bool {
	if total > len(def) {
		return false
	}
	full := 0
	for _, d := range def[:total] {
		if d >= maxDef {
			full++
		}
	}
	return full == read
}

// scanDense is scan for the sales table, where no column may hold nulls:
// a null is an input error naming its row, and f sees only full batches.
func scanDense[T any](pf *pqFile, g int, c *pqColumn, row0 int, buf *[]T, role string,
	f func(v []T, row int) error) error {
	maxDef := c.desc.MaxDefinitionLevel()
	return scan(pf, g, c, row0, buf, func(v []T, def []int16, rows, row int) error {
		if len(v) < rows {
			for i, d := range def {
				if d < maxDef {
					return rowErr(row+i, c.name, "%s column %q is null", role, c.name)
				}
			}
		}
		return f(v, row)
	})
}

// readParquet reads the period, value and key columns of a Parquet file,
// row group by row group and column by column.
func readParquet(data []byte, opt ReadOptions) (*Rows, error) {
	pf, err := openParquet(data)
	if err != nil {
		return nil, err
	}
	defer pf.r.Close()
	ti, vi, ki, err := findColumns(pf.columns, opt)
	if err != nil {
		return nil, err
	}
	tc, err := pf.column(ti)
	if err != nil {
		return nil, err
	}
	vc, err := pf.column(vi)
	if err != nil {
		return nil, err
	}
	kc := make([]*pqColumn, len(ki))
	for k, i := range ki {
		if kc[k], err = pf.column(i); err != nil {
			return nil, err
		}
	}
	if err := checkParquetTypes(tc, vc, kc); err != nil {
		return nil, err
	}
	n := pf.r.NumRows()
	if n == 0 {
		return nil, inputerr.New("no data rows")
	}
	if n < 0 {
		return nil, inputerr.New("not a readable Parquet file (it claims %d rows)", n)
	}
	// Repetitive columns compress to almost nothing, so a small file can
	// rightly declare a hundred million rows: the count is checked
	// against the memory they would take, before any is read.
	if err := checkRowMemory(opt, n, "the file declares"); err != nil {
		return nil, err
	}
	// The row count only sizes the buffers: a damaged footer may claim
	// more rows than memory holds, and a real file rarely holds more rows
	// than bytes, so the hint is capped by the file's size.
	c := newCollector(pf.columns, opt, int(min(n, int64(len(data)))))
	for k, kcol := range kc {
		if kcol.isInt() {
			c.rows.KeyTypes[k] = Int64
		}
	}
	row0 := 0
	for g := 0; g < pf.r.NumRowGroups(); g++ {
		if tc.kind == pqText && pf.dictionaryEncoded(tc, g) {
			err = scanDict(pf, g, tc, row0, c.addTimes)
		} else {
			err = readParquetTimes(pf, g, tc, row0, &c.td)
		}
		if err != nil {
			return nil, err
		}
		if c.rows.Values, err = readParquetValues(pf, g, vc, row0, c.rows.Values); err != nil {
			return nil, err
		}
		for k, kcol := range kc {
			if kcol.kind == pqText && pf.dictionaryEncoded(kcol, g) {
				err = scanDict(pf, g, kcol, row0, func(a arrow.Array, row0 int) error { return c.addKeys(k, a, row0) })
			} else {
				err = readParquetKeys(pf, g, kcol, row0, c.keys[k])
			}
			if err != nil {
				return nil, err
			}
		}
		row0 += int(pf.r.RowGroup(g).NumRows())
	}
	return c.finish()
}

// dictionaryEncoded reports whether column c's chunk in row group g has a
// dictionary page. Such text is read as Arrow dictionary arrays, so that
// each distinct key or label is looked up once per chunk, not once per
// row; for plainly stored text, building that dictionary would cost more
// than looking each value up (measured by BenchmarkReadParquet10MPlain).
func (f *pqFile) dictionaryEncoded(c *pqColumn, g int) bool {
	cc, err := f.r.MetaData().RowGroup(g).ColumnChunk(c.leaf)
	return err == nil && cc.HasDictionaryPage()
}

// scanDict reads text column c of row group g as Arrow dictionary arrays
// with parquet/file's record reader, calling f with each array and the
// number of file rows before it.
func scanDict(pf *pqFile, g int, c *pqColumn, row0 int, f func(a arrow.Array, row0 int) error) error {
	info := file.LevelInfo{NullSlotUsage: 1}
	if c.desc.MaxDefinitionLevel() > 0 {
		info.IncrementOptional()
	}
	dt := &arrow.DictionaryType{IndexType: arrow.PrimitiveTypes.Int32, ValueType: arrow.BinaryTypes.String}
	var rr file.BinaryRecordReader
	n := pf.r.RowGroup(g).NumRows()
	err := decode("Parquet", func() error {
		pr, err := pf.r.RowGroup(g).GetColumnPageReader(c.leaf)
		if err != nil {
			return err
		}
		rr = file.NewRecordReader(c.desc, info, dt, memory.DefaultAllocator, pf.r.BufferPool()).(file.BinaryRecordReader)
		rr.SetPageReader(pr)
		return nil
	})
	if err != nil {
		return &inputerr.Error{Column: c.name, Msg: "cannot read the Parquet column", Err: err}
	}
	defer rr.Release()
	for done := int64(0); done < n; {
		var chunks []arrow.Array
		err := decode("Parquet", func() error {
			rr.Reset()
			read, err := rr.ReadRecords(min(parquetBatch, n-done))
			if err == nil && read == 0 {
				err = fmt.Errorf("column chunk ends after %d of %d rows", done, n)
			}
			chunks = rr.GetBuilderChunks()
			return err
		})
		if err != nil {
			release(chunks)
			return &inputerr.Error{Row: row0 + int(done) + 1, Column: c.name, Msg: "corrupt Parquet data", Err: err}
		}
		for i, a := range chunks {
			if err := f(a, row0+int(done)); err != nil {
				release(chunks[i:])
				return err
			}
			done += int64(a.Len())
			a.Release()
		}
	}
	return nil
}

func release(arrays []arrow.Array) {
	for _, a := range arrays {
		a.Release()
	}
}

// checkParquetTypes refuses period, value and key columns of types trueup
// cannot read as such, before any data is decoded.
func checkParquetTypes(tc, vc *pqColumn, kc []*pqColumn) error {
	switch tc.kind {
	case pqDate, pqTimestamp, pqInt96, pqText, pqInt32, pqUint32, pqInt64, pqUint64:
	default:
		return inputerr.New("period column %q has Parquet type %s; %s", tc.name, tc.typeName(), periodTypesHint)
	}
	switch vc.kind {
	case pqInt32, pqUint32, pqInt64, pqUint64, pqFloat32, pqFloat64, pqDecimal:
	default:
		return inputerr.New("value column %q has Parquet type %s; it must hold numbers", vc.name, vc.typeName())
	}
	for _, c := range kc {
		if c.kind != pqText && !c.isInt() {
			return inputerr.New("key column %q has Parquet type %s; keys must be text or integers", c.name, c.typeName())
		}
	}
	return nil
}

// readParquetTimes appends the periods of row group g to td.
func readParquetTimes(pf *pqFile, g int, c *pqColumn, row0 int, td *timeDecoder) error {
	b := &pf.bufs
	integers := func(v []int64, row int) error {
		for i, x := range v {
			p, err := td.integer(x)
			if err != nil {
				return atRow(row+i, c.name, err)
			}
			td.periods = append(td.periods, p)
		}
		return nil
	}
	switch c.kind {
	case pqDate:
		td.clock.other()
		return scanDense(pf, g, c, row0, &b.int32s, "period", func(v []int32, _ int) error {
			for _, d := range v {
				td.periods = append(td.periods, Period{Day, int(d)})
			}
			return nil
		})
	case pqTimestamp:
		// An instant is dated in the zone of the stored Arrow schema, if
		// any, else in UTC; a local date-time (not adjusted to UTC) is
		// dated as written.
		var last int64
		var lastP Period
		have := false
		instants := c.zone == nil && c.utc
		if !instants {
			td.clock.other()
		}
		perSec := int(c.perDay / 86400)
		return scanDense(pf, g, c, row0, &b.int64s, "period", func(v []int64, _ int) error {
			for _, t := range v {
				if c.zone == nil {
					day := floorDiv(int(t), int(c.perDay))
					td.periods = append(td.periods, Period{Day, day})
					if instants {
						td.clock.instant(day, secondOfDay(int(t)-day*int(c.perDay), perSec))
					}
					continue
				}
				if !have || t != last {
					perSec := c.perDay / 86400
					sec := floorDiv(int(t), int(perSec))
					nsec := (t - int64(sec)*perSec) * (1e9 / perSec)
					last, lastP, have = t, FromDate(time.Unix(int64(sec), nsec).In(c.zone), Day), true
				}
				td.periods = append(td.periods, lastP)
			}
			return nil
		})
	case pqInt96:
		return scanDense(pf, g, c, row0, &b.int96s, "period", func(v []parquet.Int96, _ int) error {
			for _, t := range v {
				u := t.ToTime().UTC()
				p := FromDate(u, Day)
				td.periods = append(td.periods, p)
				td.clock.instant(p.Index, secondOfDay(int(u.Sub(u.Truncate(24*time.Hour))), int(time.Second)))
			}
			return nil
		})
	case pqText:
		return scanDense(pf, g, c, row0, &b.bytes, "period", func(v []parquet.ByteArray, row int) error {
			for i, s := range v {
				p, err := td.parseBytes(s)
				if err != nil {
					return atRow(row+i, c.name, err)
				}
				td.periods = append(td.periods, p)
			}
			return nil
		})
	case pqInt32, pqUint32:
		unsigned := c.kind == pqUint32
		wide := make([]int64, 0, parquetBatch)
		return scanDense(pf, g, c, row0, &b.int32s, "period", func(v []int32, row int) error {
			wide = wide[:0]
			for _, x := range v {
				if unsigned {
					wide = append(wide, int64(uint32(x)))
				} else {
					wide = append(wide, int64(x))
				}
			}
			return integers(wide, row)
		})
	default: // pqInt64, pqUint64
		unsigned := c.kind == pqUint64
		return scanDense(pf, g, c, row0, &b.int64s, "period", func(v []int64, row int) error {
			if unsigned {
				for i, x := range v {
					if x < 0 { // above math.MaxInt64 as uint64
						return atRow(row+i, c.name, inputerr.New("period %d is too large", uint64(x)))
					}
				}
			}
			return integers(v, row)
		})
	}
}

// readParquetValues appends the values of row group g to vals and refuses
// NaN and infinities.
func readParquetValues(pf *pqFile, g int, c *pqColumn, row0 int, vals []float64) ([]float64, error) {
	b := &pf.bufs
	start := len(vals)
	var err error
	switch c.kind {
	case pqFloat64:
		err = scanDense(pf, g, c, row0, &b.float64, "value", func(v []float64, _ int) error {
			vals = append(vals, v...)
			return nil
		})
	case pqFloat32:
		err = scanDense(pf, g, c, row0, &b.float32, "value", func(v []float32, _ int) error {
			vals = appendNumbers(vals, v)
			return nil
		})
	case pqInt32, pqUint32:
		unsigned := c.kind == pqUint32
		err = scanDense(pf, g, c, row0, &b.int32s, "value", func(v []int32, _ int) error {
			for _, x := range v {
				if unsigned {
					vals = append(vals, float64(uint32(x)))
				} else {
					vals = append(vals, float64(x))
				}
			}
			return nil
		})
	case pqInt64, pqUint64:
		unsigned := c.kind == pqUint64
		err = scanDense(pf, g, c, row0, &b.int64s, "value", func(v []int64, _ int) error {
			for _, x := range v {
				if unsigned {
					vals = append(vals, float64(uint64(x)))
				} else {
					vals = append(vals, float64(x))
				}
			}
			return nil
		})
	default: // pqDecimal
		vals, err = readParquetDecimals(pf, g, c, row0, vals)
	}
	if err != nil {
		return vals, err
	}
	for i, v := range vals[start:] {
		if v-v != 0 { // NaN or ±Inf
			return vals, rowErr(row0+i+1, c.name, "value column %q is %v, not a finite number", c.name, v)
		}
	}
	return vals, nil
}

// readParquetDecimals appends the decimal values of row group g to vals.
func readParquetDecimals(pf *pqFile, g int, c *pqColumn, row0 int, vals []float64) ([]float64, error) {
	b := &pf.bufs
	unscaled := func(v []int64) {
		for _, x := range v {
			vals = append(vals, decimal128.FromI64(x).ToFloat64(c.scale))
		}
	}
	switch c.desc.PhysicalType() {
	case parquet.Types.Int32:
		wide := make([]int64, 0, parquetBatch)
		err := scanDense(pf, g, c, row0, &b.int32s, "value", func(v []int32, _ int) error {
			wide = wide[:0]
			for _, x := range v {
				wide = append(wide, int64(x))
			}
			unscaled(wide)
			return nil
		})
		return vals, err
	case parquet.Types.Int64:
		err := scanDense(pf, g, c, row0, &b.int64s, "value", func(v []int64, _ int) error {
			unscaled(v)
			return nil
		})
		return vals, err
	case parquet.Types.FixedLenByteArray:
		err := scanDense(pf, g, c, row0, &b.fixed, "value", func(v []parquet.FixedLenByteArray, row int) error {
			for i, x := range v {
				f, ok := decimalFromBytes(x, c.scale)
				if !ok {
					return rowErr(row+i, c.name, "decimal of %d bytes in column %q is not readable", len(x), c.name)
				}
				vals = append(vals, f)
			}
			return nil
		})
		return vals, err
	default:
		err := scanDense(pf, g, c, row0, &b.bytes, "value", func(v []parquet.ByteArray, row int) error {
			for i, x := range v {
				f, ok := decimalFromBytes(x, c.scale)
				if !ok {
					return rowErr(row+i, c.name, "decimal of %d bytes in column %q is not readable", len(x), c.name)
				}
				vals = append(vals, f)
			}
			return nil
		})
		return vals, err
	}
}

// decimalFromBytes converts an unscaled big-endian two's-complement
// integer of up to 32 bytes (the Parquet DECIMAL encoding on byte arrays)
// to a float64 divided by 10^scale.
func decimalFromBytes(b []byte, scale int32) (float64, bool) {
	if len(b) == 0 || len(b) > 32 {
		return 0, false
	}
	var w [32]byte
	if b[0]&0x80 != 0 {
		for i := range w {
			w[i] = 0xff
		}
	}
	copy(w[32-len(b):], b)
	be := binary.BigEndian.Uint64
	if len(b) <= 16 {
		return decimal128.New(int64(be(w[16:24])), be(w[24:])).ToFloat64(scale), true
	}
	return decimal256.New(be(w[0:8]), be(w[8:16]), be(w[16:24]), be(w[24:])).ToFloat64(scale), true
}

// readParquetKeys appends the key codes of row group g to enc.
func readParquetKeys(pf *pqFile, g int, c *pqColumn, row0 int, enc *keyEncoder) error {
	b := &pf.bufs
	switch c.kind {
	case pqText:
		return scanDense(pf, g, c, row0, &b.bytes, "key", func(v []parquet.ByteArray, row int) error {
			for i, s := range v {
				if len(s) == 0 {
					return rowErr(row+i, c.name, "key column %q is empty", c.name)
				}
				enc.codes = append(enc.codes, enc.codeBytes(s))
			}
			return nil
		})
	case pqInt32, pqUint32:
		unsigned := c.kind == pqUint32
		return scanDense(pf, g, c, row0, &b.int32s, "key", func(v []int32, _ int) error {
			for _, x := range v {
				if unsigned {
					u := uint32(x)
					enc.codes = append(enc.codes, enc.intCode(int64(u), func() string { return formatInt(u) }))
				} else {
					enc.codes = append(enc.codes, enc.intCode(int64(x), func() string { return formatInt(x) }))
				}
			}
			return nil
		})
	default: // pqInt64, pqUint64
		unsigned := c.kind == pqUint64
		return scanDense(pf, g, c, row0, &b.int64s, "key", func(v []int64, _ int) error {
			for _, x := range v {
				if unsigned {
					// A whole column is either signed or unsigned, so the
					// bits of x identify the key either way.
					enc.codes = append(enc.codes, enc.intCode(x, func() string { return formatInt(uint64(x)) }))
				} else {
					enc.codes = append(enc.codes, enc.intCode(x, func() string { return formatInt(x) }))
				}
			}
			return nil
		})
	}
}
