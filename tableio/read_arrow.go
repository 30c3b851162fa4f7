package tableio

import (
	"bytes"
	"fmt"
	"math"
	"strconv"
	"time"

	"github.com/apache/arrow-go/v18/arrow"
	"github.com/apache/arrow-go/v18/arrow/array"
	"github.com/apache/arrow-go/v18/arrow/ipc"
	"github.com/apache/arrow-go/v18/arrow/memory"

	"trueup/inputerr"
)

// readIPC reads an Arrow IPC file (the random-access file format).
func readIPC(data []byte, opt ReadOptions) (*Rows, error) {
	if err := checkIPCBounds(data); err != nil {
		return nil, inputerr.New("not a valid Arrow IPC file: %v", err)
	}
	var r *ipc.FileReader
	err := decode("Arrow IPC", func() (err error) {
		r, err = ipc.NewFileReader(bytes.NewReader(data), ipc.WithAllocator(memory.DefaultAllocator))
		if err != nil {
			return inputerr.New("not a valid Arrow IPC file: %v", err)
		}
		return nil
	})
	if err != nil {
		return nil, err
	}
	defer r.Close()
	columns := fieldNames(r.Schema())
	if _, _, _, err := findColumns(columns, opt); err != nil {
		return nil, err
	}
	c := newCollector(columns, opt, 0)
	var batches int
	if err := decode("Arrow IPC", func() error { batches = r.NumRecords(); return nil }); err != nil {
		return nil, err
	}
	for i := 0; i < batches; i++ {
		var rec arrow.RecordBatch
		err := decode("Arrow IPC", func() (err error) {
			if rec, err = r.RecordBatch(i); err != nil {
				return inputerr.New("corrupt Arrow IPC record batch %d: %v", i, err)
			}
			return nil
		})
		if err != nil {
			return nil, err
		}
		// The arrays of a batch are views on the file's buffers, which a
		// damaged file can make inconsistent with their lengths (offsets
		// past the end, say), so reading them counts as decoding too.
		if err := decode("Arrow IPC", func() error { return c.add(rec) }); err != nil {
			return nil, err
		}
	}
	return c.finish()
}

// decode runs a call into the Arrow or Parquet decoders, turning a panic,
// which a damaged file can provoke, into an input error naming the format.
// trueup's own code runs outside decode, so its bugs still panic.
func decode(format string, f func() error) (err error) {
	defer func() {
		if r := recover(); r != nil {
			err = inputerr.New("not a readable %s file (the decoder failed: %v)", format, r)
		}
	}()
	return f()
}

func fieldNames(sc *arrow.Schema) []string {
	names := make([]string, sc.NumFields())
	for i, f := range sc.Fields() {
		names[i] = f.Name
	}
	return names
}

// collector appends Arrow record batches to Rows.
type collector struct {
	opt      ReadOptions
	rows     *Rows
	td       timeDecoder
	keys     []*keyEncoder
	ti, vi   int
	ki       []int
	resolved bool
	idx      []int32 // dictionary indices widened or narrowed to int32
	lastRaw  int64   // last zoned timestamp and its period
	lastRawP Period
	haveRaw  bool
}

func newCollector(columns []string, opt ReadOptions, n int) *collector {
	c := &collector{opt: opt, rows: newRows(columns, opt, n)}
	c.td.periods = c.rows.Periods
	c.keys = make([]*keyEncoder, len(opt.Keys))
	for k := range c.keys {
		c.keys[k] = newKeyEncoder(n)
	}
	return c
}

func (c *collector) add(rec arrow.RecordBatch) error {
	if !c.resolved {
		sc := rec.Schema()
		pos := func(name string) int {
			if idx := sc.FieldIndices(name); len(idx) > 0 {
				return idx[0]
			}
			panic("tableio: column " + name + " missing from record batch") // findColumns checked the schema
		}
		c.ti, c.vi = pos(c.opt.Time), pos(c.opt.Value)
		c.ki = make([]int, len(c.opt.Keys))
		for k, name := range c.opt.Keys {
			c.ki[k] = pos(name)
		}
		c.resolved = true
	}
	row0 := len(c.rows.Values)
	if err := c.addTimes(rec.Column(c.ti), row0); err != nil {
		return err
	}
	if err := c.addValues(rec.Column(c.vi), row0); err != nil {
		return err
	}
	for k := range c.keys {
		if err := c.addKeys(k, rec.Column(c.ki[k]), row0); err != nil {
			return err
		}
	}
	return nil
}

func (c *collector) finish() (*Rows, error) {
	r := c.rows
	if err := c.td.finish(c.opt.TimeKind); err != nil {
		return nil, columnErr(c.opt.Time, err)
	}
	r.Periods = c.td.periods
	if c.td.note != "" {
		r.Notes = append(r.Notes, c.td.note)
	}
	r.N = len(r.Values)
	if r.N == 0 {
		return nil, inputerr.New("no data rows")
	}
	for k, enc := range c.keys {
		r.KeyCodes[k], r.KeyDict[k] = enc.codes, enc.dict
	}
	if err := checkKeyDicts(r); err != nil {
		return nil, err
	}
	return r, nil
}

// stringValuer is satisfied by Arrow's string arrays (String, LargeString,
// StringView).
type stringValuer interface {
	arrow.Array
	Value(int) string
}

const (
	msPerDay = 86400 * 1000
)

// addTimes converts one batch of the period column. Dates and timestamps
// give days; text is parsed with ParsePeriod.
func (c *collector) addTimes(a arrow.Array, row0 int) error {
	name := c.opt.Time
	nulls := a.NullN() > 0
	nullErr := func(i int) error {
		return rowErr(row0+i+1, name, "period column %q is null", name)
	}
	td := &c.td
	start := len(td.periods)
	switch a := a.(type) {
	case *array.Date32:
		td.clock.other()
		for i, v := range a.Date32Values() {
			if nulls && a.IsNull(i) {
				return nullErr(i)
			}
			td.periods = append(td.periods, Period{Day, int(v)})
		}
	case *array.Date64:
		td.clock.other()
		for i, v := range a.Date64Values() {
			if nulls && a.IsNull(i) {
				return nullErr(i)
			}
			td.periods = append(td.periods, Period{Day, floorDiv(int(v), msPerDay)})
		}
	case *array.Timestamp:
		ts := a.DataType().(*arrow.TimestampType)
		perSec := int64(1)
		for u := arrow.Second; u < ts.Unit; u++ {
			perSec *= 1000
		}
		loc, err := zone(ts.TimeZone)
		if err != nil {
			return inputerr.New("period column %q: %v", name, err)
		}
		// A zone of UTC makes instants; no zone makes wall-clock times,
		// taken as written.
		instants := loc == nil && ts.TimeZone != ""
		if !instants {
			td.clock.other()
		}
		for i, v := range a.TimestampValues() {
			if nulls && a.IsNull(i) {
				return nullErr(i)
			}
			raw := int64(v)
			if loc == nil {
				day := floorDiv(int(raw), int(perSec*86400))
				td.periods = append(td.periods, Period{Day, day})
				if instants {
					td.clock.instant(day, secondOfDay(int(raw)-day*int(perSec*86400), int(perSec)))
				}
				continue
			}
			if !c.haveRaw || raw != c.lastRaw {
				sec := floorDiv(int(raw), int(perSec))
				nsec := (raw - int64(sec)*perSec) * (1e9 / perSec)
				c.lastRaw, c.lastRawP, c.haveRaw = raw, FromDate(time.Unix(int64(sec), nsec).In(loc), Day), true
			}
			td.periods = append(td.periods, c.lastRawP)
		}
	case *array.Dictionary:
		dict, ok := a.Dictionary().(stringValuer)
		if !ok {
			return inputerr.New("period column %q is dictionary-encoded %s; use dates, timestamps or text labels", name, a.Dictionary().DataType())
		}
		if td.dictOf != dict.Data() || len(td.dictMap) != dict.Len() {
			td.dictOf = dict.Data()
			td.dictMap = make([]Period, dict.Len())
			td.dictOK = make([]bool, dict.Len())
		}
		ix, err := c.indices(a, row0, name)
		if err != nil {
			return err
		}
		for i, j := range ix {
			if nulls && a.IsNull(i) {
				return nullErr(i)
			}
			if !td.dictOK[j] {
				if dict.IsNull(int(j)) {
					return nullErr(i)
				}
				p, err := td.parse(dict.Value(int(j)))
				if err != nil {
					return atRow(row0+i+1, name, err)
				}
				td.dictMap[j], td.dictOK[j] = p, true
			}
			td.periods = append(td.periods, td.dictMap[j])
		}
	case stringValuer:
		for i := 0; i < a.Len(); i++ {
			if nulls && a.IsNull(i) {
				return nullErr(i)
			}
			p, err := td.parse(a.Value(i))
			if err != nil {
				return atRow(row0+i+1, name, err)
			}
			td.periods = append(td.periods, p)
		}
	case *array.Int64:
		return c.addIntTimes(a, a.Values(), row0)
	case *array.Int32:
		return c.addIntTimes(a, a.Values(), row0)
	case *array.Int16:
		return c.addIntTimes(a, a.Values(), row0)
	case *array.Uint32:
		return c.addIntTimes(a, a.Values(), row0)
	case *array.Uint16:
		return c.addIntTimes(a, a.Values(), row0)
	case *array.Uint64:
		return c.addIntTimes(a, a.Values(), row0)
	default:
		return inputerr.New("period column %q has type %s; %s", name, a.DataType(), periodTypesHint)
	}
	if len(td.periods) > start {
		if err := td.checkGrain(td.periods[start]); err != nil {
			return atRow(row0+1, name, err)
		}
	}
	return nil
}

// periodTypesHint lists the period column types the readers accept.
const periodTypesHint = "use dates, timestamps, integers (years or steps) or text labels such as 2024-03-31, 2024-W07, 2024-03, 2024-Q1 or 2024"

// addIntTimes converts one batch of an integer period column (years or
// steps, see TimeKind).
func (c *collector) addIntTimes(a arrow.Array, v any, row0 int) error {
	nulls := a.NullN() > 0
	return eachInt(v, func(i int, x int64) error {
		if nulls && a.IsNull(i) {
			return rowErr(row0+i+1, c.opt.Time, "period column %q is null", c.opt.Time)
		}
		p, err := c.td.integer(x)
		if err != nil {
			return atRow(row0+i+1, c.opt.Time, err)
		}
		c.td.periods = append(c.td.periods, p)
		return nil
	})
}

// eachInt calls f with each entry of an integer slice as an int64; a
// uint64 too large for int64 is passed as -1, which callers refuse.
func eachInt(v any, f func(i int, x int64) error) error {
	var err error
	run := func(n int, at func(int) int64) {
		for i := 0; i < n && err == nil; i++ {
			err = f(i, at(i))
		}
	}
	switch v := v.(type) {
	case []int64:
		run(len(v), func(i int) int64 { return v[i] })
	case []int32:
		run(len(v), func(i int) int64 { return int64(v[i]) })
	case []int16:
		run(len(v), func(i int) int64 { return int64(v[i]) })
	case []uint32:
		run(len(v), func(i int) int64 { return int64(v[i]) })
	case []uint16:
		run(len(v), func(i int) int64 { return int64(v[i]) })
	case []uint64:
		run(len(v), func(i int) int64 {
			if v[i] > math.MaxInt64 {
				return -1
			}
			return int64(v[i])
		})
	default:
		panic(fmt.Sprintf("tableio: eachInt of %T", v))
	}
	return err
}

// zone returns the location of an Arrow timestamp time zone, nil for UTC
// or no zone (wall-clock times, taken as they are).
func zone(tz string) (*time.Location, error) {
	switch tz {
	case "", "UTC", "Z", "+00:00", "Etc/UTC":
		return nil, nil
	}
	if len(tz) == 6 && (tz[0] == '+' || tz[0] == '-') && tz[3] == ':' {
		h, err1 := strconv.Atoi(tz[1:3])
		m, err2 := strconv.Atoi(tz[4:6])
		if err1 == nil && err2 == nil {
			off := (h*60 + m) * 60
			if tz[0] == '-' {
				off = -off
			}
			return time.FixedZone(tz, off), nil
		}
	}
	loc, err := time.LoadLocation(tz)
	if err != nil {
		return nil, inputerr.New("unknown time zone %q", tz)
	}
	return loc, nil
}

// indices returns the dictionary indices of a batch as int32s, refusing
// one that points outside the dictionary (the rows start at row0).
func (c *collector) indices(d *array.Dictionary, row0 int, name string) ([]int32, error) {
	ix := c.rawIndices(d)
	// A damaged file may point past its dictionary; nulls may hold anything.
	n := int32(d.Dictionary().Len())
	for i, j := range ix {
		if (j < 0 || j >= n) && !d.IsNull(i) {
			return nil, rowErr(row0+i+1, name, "column %q refers to entry %d of a dictionary of %d: the file is damaged", name, j, n)
		}
	}
	return ix, nil
}

// rawIndices returns the dictionary indices as int32.
func (c *collector) rawIndices(d *array.Dictionary) []int32 {
	switch ix := d.Indices().(type) {
	case *array.Int32:
		return ix.Values()
	case *array.Int8:
		return widen(c, ix.Values())
	case *array.Uint8:
		return widen(c, ix.Values())
	case *array.Int16:
		return widen(c, ix.Values())
	case *array.Uint16:
		return widen(c, ix.Values())
	case *array.Uint32:
		return widen(c, ix.Values())
	case *array.Int64:
		return widen(c, ix.Values())
	case *array.Uint64:
		return widen(c, ix.Values())
	}
	panic("tableio: unexpected dictionary index type " + d.Indices().DataType().String())
}

func widen[T int8 | uint8 | int16 | uint16 | uint32 | int64 | uint64](c *collector, v []T) []int32 {
	c.idx = c.idx[:0]
	for _, x := range v {
		c.idx = append(c.idx, int32(x))
	}
	return c.idx
}

type number interface {
	int8 | int16 | int32 | int64 | uint8 | uint16 | uint32 | uint64 | float32 | float64
}

func appendNumbers[T number](dst []float64, v []T) []float64 {
	for _, x := range v {
		dst = append(dst, float64(x))
	}
	return dst
}

func appendDecimals[T interface{ ToFloat64(int32) float64 }](dst []float64, v []T, scale int32) []float64 {
	for _, x := range v {
		dst = append(dst, x.ToFloat64(scale))
	}
	return dst
}

// addValues converts one batch of the value column to float64 and refuses
// nulls, NaN and infinities.
func (c *collector) addValues(a arrow.Array, row0 int) error {
	vals := c.rows.Values
	start := len(vals)
	switch a := a.(type) {
	case *array.Float64:
		vals = append(vals, a.Values()...)
	case *array.Float32:
		vals = appendNumbers(vals, a.Values())
	case *array.Int64:
		vals = appendNumbers(vals, a.Values())
	case *array.Int32:
		vals = appendNumbers(vals, a.Values())
	case *array.Int16:
		vals = appendNumbers(vals, a.Values())
	case *array.Int8:
		vals = appendNumbers(vals, a.Values())
	case *array.Uint64:
		vals = appendNumbers(vals, a.Values())
	case *array.Uint32:
		vals = appendNumbers(vals, a.Values())
	case *array.Uint16:
		vals = appendNumbers(vals, a.Values())
	case *array.Uint8:
		vals = appendNumbers(vals, a.Values())
	case *array.Decimal32:
		vals = appendDecimals(vals, a.Values(), scaleOf(a))
	case *array.Decimal64:
		vals = appendDecimals(vals, a.Values(), scaleOf(a))
	case *array.Decimal128:
		vals = appendDecimals(vals, a.Values(), scaleOf(a))
	case *array.Decimal256:
		vals = appendDecimals(vals, a.Values(), scaleOf(a))
	default:
		return inputerr.New("value column %q has type %s; it must hold numbers", c.opt.Value, a.DataType())
	}
	c.rows.Values = vals
	nulls := a.NullN() > 0
	for i, v := range vals[start:] {
		if nulls && a.IsNull(i) {
			return rowErr(row0+i+1, c.opt.Value, "value column %q is null", c.opt.Value)
		}
		if v-v != 0 { // NaN or ±Inf
			return rowErr(row0+i+1, c.opt.Value, "value column %q is %v, not a finite number", c.opt.Value, v)
		}
	}
	return nil
}

func scaleOf(a arrow.Array) int32 { return a.DataType().(arrow.DecimalType).GetScale() }

// addKeys dictionary-encodes one batch of key column k.
func (c *collector) addKeys(k int, a arrow.Array, row0 int) error {
	enc, name := c.keys[k], c.opt.Keys[k]
	nulls := a.NullN() > 0
	bad := func(i int, what string) error {
		return rowErr(row0+i+1, name, "key column %q is %s", name, what)
	}
	if arrow.IsInteger(a.DataType().ID()) {
		c.rows.KeyTypes[k] = Int64
	}
	switch a := a.(type) {
	case *array.Dictionary:
		dict := a.Dictionary()
		if arrow.IsInteger(dict.DataType().ID()) {
			c.rows.KeyTypes[k] = Int64
		}
		if enc.dictOf != dict.Data() || len(enc.dictMap) != dict.Len() {
			enc.dictOf = dict.Data()
			enc.dictMap = enc.dictMap[:0]
			for range dict.Len() {
				enc.dictMap = append(enc.dictMap, -1)
			}
		}
		ix, err := c.indices(a, row0, name)
		if err != nil {
			return err
		}
		for i, j := range ix {
			if nulls && a.IsNull(i) {
				return bad(i, "null")
			}
			code := enc.dictMap[j]
			if code < 0 {
				if dict.IsNull(int(j)) {
					return bad(i, "null")
				}
				s, ok := keyText(dict, int(j))
				if !ok {
					return inputerr.New("key column %q is dictionary-encoded %s; keys must be text or integers", name, dict.DataType())
				}
				if s == "" {
					return bad(i, "empty")
				}
				code = enc.code(s)
				enc.dictMap[j] = code
			}
			enc.codes = append(enc.codes, code)
		}
	case *array.String:
		for i := 0; i < a.Len(); i++ {
			if nulls && a.IsNull(i) {
				return bad(i, "null")
			}
			s := a.Value(i)
			if s == "" {
				return bad(i, "empty")
			}
			enc.codes = append(enc.codes, enc.code(s))
		}
	case stringValuer:
		for i := 0; i < a.Len(); i++ {
			if nulls && a.IsNull(i) {
				return bad(i, "null")
			}
			s := a.Value(i)
			if s == "" {
				return bad(i, "empty")
			}
			enc.codes = append(enc.codes, enc.code(s))
		}
	case *array.Int64:
		return addIntKeys(enc, a, a.Values(), nulls, bad)
	case *array.Int32:
		return addIntKeys(enc, a, a.Values(), nulls, bad)
	case *array.Int16:
		return addIntKeys(enc, a, a.Values(), nulls, bad)
	case *array.Int8:
		return addIntKeys(enc, a, a.Values(), nulls, bad)
	case *array.Uint64:
		return addIntKeys(enc, a, a.Values(), nulls, bad)
	case *array.Uint32:
		return addIntKeys(enc, a, a.Values(), nulls, bad)
	case *array.Uint16:
		return addIntKeys(enc, a, a.Values(), nulls, bad)
	case *array.Uint8:
		return addIntKeys(enc, a, a.Values(), nulls, bad)
	default:
		return inputerr.New("key column %q has type %s; keys must be text or integers", name, a.DataType())
	}
	return nil
}

type integer interface {
	int8 | int16 | int32 | int64 | uint8 | uint16 | uint32 | uint64
}

func addIntKeys[T integer](enc *keyEncoder, a arrow.Array, v []T, nulls bool, bad func(int, string) error) error {
	for i, x := range v {
		if nulls && a.IsNull(i) {
			return bad(i, "null")
		}
		enc.codes = append(enc.codes, enc.intCode(int64(x), func() string { return formatInt(x) }))
	}
	return nil
}

func formatInt[T integer](x T) string {
	if x < 0 {
		return strconv.FormatInt(int64(x), 10)
	}
	return strconv.FormatUint(uint64(x), 10)
}

// keyText returns entry j of a dictionary of keys as text.
func keyText(dict arrow.Array, j int) (string, bool) {
	switch d := dict.(type) {
	case stringValuer:
		return d.Value(j), true
	case *array.Binary:
		return string(d.Value(j)), true
	case *array.LargeBinary:
		return string(d.Value(j)), true
	case *array.Int64:
		return formatInt(d.Value(j)), true
	case *array.Int32:
		return formatInt(d.Value(j)), true
	case *array.Int16:
		return formatInt(d.Value(j)), true
	case *array.Int8:
		return formatInt(d.Value(j)), true
	case *array.Uint64:
		return formatInt(d.Value(j)), true
	case *array.Uint32:
		return formatInt(d.Value(j)), true
	case *array.Uint16:
		return formatInt(d.Value(j)), true
	case *array.Uint8:
		return formatInt(d.Value(j)), true
	}
	return "", false
}
