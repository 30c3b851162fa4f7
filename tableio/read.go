package tableio

import (
	"crypto/sha256"
	"encoding/hex"
	"fmt"
	"os"
	"strings"
	"time"

	"trueup/inputerr"
	"trueup/internal/membudget"
)

// Read loads the long sales table at path: one row per period and key
// combination, with a period column, a value column and key columns named
// by opt. The format comes from opt.Format or the file name extension.
//
// Every problem with the file is an input error (see inputerr)
// whose message names the file and, where it applies, the column and the
// row: row N counts data rows from 1 in Parquet and Arrow files; line N
// counts lines of a CSV file with the header as line 1. A null, NaN or
// infinite value, an empty key, an unreadable period, periods of mixed
// grain and a file without data rows are all refused.
func Read(path string, opt ReadOptions) (*Rows, error) {
	f, err := formatOf(path, opt.Format)
	if err != nil {
		return nil, err
	}
	if err := checkOptions(opt); err != nil {
		return nil, err
	}
	data, err := os.ReadFile(path)
	if err != nil {
		return nil, &inputerr.Error{File: path, Msg: "cannot read", Err: unwrapPath(err)}
	}
	if len(data) == 0 {
		return nil, inputerr.New("read %s: no data rows (the file is empty)", path)
	}
	var r *Rows
	switch f {
	case CSV:
		r, err = readCSV(data, opt)
	case Parquet:
		r, err = readParquet(data, opt)
	default:
		r, err = readIPC(data, opt)
	}
	if err != nil {
		return nil, inFile(path, err)
	}
	sum := sha256.Sum256(data)
	r.Path = path
	r.SHA256 = hex.EncodeToString(sum[:])
	return r, nil
}

// inFile names the file in err: an input error without a file gets it in
// its File field; any other error is wrapped with the path.
func inFile(path string, err error) error {
	if e, ok := err.(*inputerr.Error); ok && e.File == "" {
		e.File = path
		return e
	}
	return fmt.Errorf("read %s: %w", path, err)
}

// unwrapPath drops the *os.PathError wrapper so the path is not printed
// twice; the cause (a syscall.Errno) still matches fs.ErrNotExist and the
// like under errors.Is.
func unwrapPath(err error) error {
	if pe, ok := err.(*os.PathError); ok {
		return pe.Err
	}
	return err
}

func checkOptions(opt ReadOptions) error {
	if opt.Time == "" {
		return inputerr.New("no period column named")
	}
	if opt.Value == "" {
		return inputerr.New("no value column named")
	}
	seen := map[string]string{opt.Time: "period", opt.Value: "value"}
	if opt.Time == opt.Value {
		return inputerr.New("column %q is named as both the period and the value column", opt.Time)
	}
	for _, k := range opt.Keys {
		if k == "" {
			return inputerr.New("empty key column name")
		}
		if role, dup := seen[k]; dup {
			return inputerr.New("key column %q is already named as the %s column", k, role)
		}
		seen[k] = "key"
	}
	return nil
}

// newRows prepares Rows for about n rows.
func newRows(columns []string, opt ReadOptions, n int) *Rows {
	r := &Rows{
		Columns:  columns,
		Periods:  make([]Period, 0, n),
		Values:   make([]float64, 0, n),
		KeyNames: append([]string(nil), opt.Keys...),
		KeyCodes: make([][]int32, len(opt.Keys)),
		KeyDict:  make([][]string, len(opt.Keys)),
		KeyTypes: make([]ColumnType, len(opt.Keys)),
	}
	return r
}

// findColumns returns the positions in columns of the period, value and
// key columns, or an input error naming a missing one and listing the
// columns the file has.
func findColumns(columns []string, opt ReadOptions) (ti, vi int, ki []int, err error) {
	pos := make(map[string]int, len(columns))
	for i, c := range columns {
		if _, dup := pos[c]; dup {
			pos[c] = -2
			continue
		}
		pos[c] = i
	}
	find := func(role, name string) (int, error) {
		i, ok := pos[name]
		switch {
		case !ok:
			return 0, inputerr.New("no %s column %q; the file has columns: %s", role, name, quoteList(columns))
		case i < 0:
			return 0, inputerr.New("%s column %q appears more than once in the file", role, name)
		}
		return i, nil
	}
	if ti, err = find("period", opt.Time); err != nil {
		return
	}
	if vi, err = find("value", opt.Value); err != nil {
		return
	}
	ki = make([]int, len(opt.Keys))
	for k, name := range opt.Keys {
		if ki[k], err = find("key", name); err != nil {
			return
		}
	}
	return
}

func quoteList(names []string) string {
	q := make([]string, len(names))
	for i, n := range names {
		q[i] = fmt.Sprintf("%q", n)
	}
	return strings.Join(q, ", ")
}

// keyEncoder dictionary-encodes one key column: codes are given in order of
// first appearance. Sales files are usually sorted or grouped, so the last
// key seen is checked before the map.
type keyEncoder struct {
	codes    []int32
	dict     []string
	index    map[string]int32
	ints     map[int64]int32
	last     string
	lastCode int32 // -1 before the first key
	lastInt  int64

	// For dictionary-encoded Arrow columns: the dictionary of the previous
	// batch and the code of each of its entries (-1 where not yet seen).
	dictOf  any
	dictMap []int32
}

func newKeyEncoder(n int) *keyEncoder {
	return &keyEncoder{
		codes:    make([]int32, 0, n),
		index:    map[string]int32{},
		lastCode: -1,
	}
}

// code returns the code of key s, adding it to the dictionary when new.
// s may point into a reused buffer; the dictionary keeps a copy.
func (k *keyEncoder) code(s string) int32 {
	if k.lastCode >= 0 && s == k.last {
		return k.lastCode
	}
	c, ok := k.index[s]
	if !ok {
		c = int32(len(k.dict))
		s = strings.Clone(s)
		k.dict = append(k.dict, s)
		k.index[s] = c
	}
	k.last, k.lastCode = k.dict[c], c
	return c
}

// codeBytes is code for a key held in a byte slice; a repeated key costs
// one comparison and a known one a map lookup, neither allocating.
func (k *keyEncoder) codeBytes(b []byte) int32 {
	if k.lastCode >= 0 && string(b) == k.last {
		return k.lastCode
	}
	if c, ok := k.index[string(b)]; ok {
		k.last, k.lastCode = k.dict[c], c
		return c
	}
	return k.code(string(b))
}

// intCode is code for integer keys, written as decimal text in the
// dictionary; format renders the value the way its column type prints.
func (k *keyEncoder) intCode(v int64, format func() string) int32 {
	if k.lastCode >= 0 && k.ints != nil && v == k.lastInt {
		return k.lastCode
	}
	if k.ints == nil {
		k.ints = map[int64]int32{}
	}
	c, ok := k.ints[v]
	if !ok {
		c = k.code(format())
		k.ints[v] = c
	}
	k.lastInt, k.lastCode = v, c
	k.last = k.dict[c]
	return c
}

// timeDecoder turns period cells into Periods, remembering the last label
// so that runs of equal labels are parsed once, and checks that all
// periods share one grain. Bare integers are kept as steps of Grain Index
// until finish decides, for the whole column, whether they are years.
type timeDecoder struct {
	periods   []Period
	grain     Grain
	haveGrain bool
	last      string
	lastP     Period
	haveLast  bool
	notYears  bool // some bare integer fails the automatic year rule

	dictOf  any
	dictMap []Period
	dictOK  []bool

	clock utcClock // UTC times of day, to find local midnights (see finish)
	note  string   // what finish did to the periods, for the input checks
}

// parse reads a period label.
func (t *timeDecoder) parse(s string) (Period, error) {
	if t.haveLast && s == t.last {
		return t.lastP, nil
	}
	p, bare, err := parseLabel(s)
	if err != nil {
		return Period{}, err
	}
	if bare && !yearLike(strings.TrimSpace(s), p.Index) {
		t.notYears = true
	}
	if sec, ok := utcSecondOfDay(s); ok {
		t.clock.instant(p.Index, sec)
	} else {
		t.clock.other()
	}
	if err := t.checkGrain(p); err != nil {
		return Period{}, err
	}
	t.last, t.lastP, t.haveLast = strings.Clone(s), p, true
	return p, nil
}

// parseBytes is parse for a label in a byte slice; a run of equal labels
// costs one comparison per row and no allocation.
func (t *timeDecoder) parseBytes(b []byte) (Period, error) {
	if t.haveLast && string(b) == t.last {
		return t.lastP, nil
	}
	return t.parse(string(b))
}

// integer reads a period stored as an integer number: a year or a step.
func (t *timeDecoder) integer(n int64) (Period, error) {
	if n < 0 || n > maxStep {
		return Period{}, inputerr.New("period %d is not a year or a step number (use whole numbers from 0)", n)
	}
	if n < minAutoYear || n > maxAutoYear {
		t.notYears = true
	}
	p := Period{Index, int(n)}
	if err := t.checkGrain(p); err != nil {
		return Period{}, err
	}
	return p, nil
}

func (t *timeDecoder) checkGrain(p Period) error {
	if !t.haveGrain {
		t.grain, t.haveGrain = p.Grain, true
		return nil
	}
	if p.Grain != t.grain {
		return inputerr.New("period %s is a %s but earlier periods are %ss; use one grain throughout", p, p.Grain, t.grain)
	}
	return nil
}

// finish decides what a column of bare integers holds (see TimeKind) and
// turns the steps into years when they are years. A column of integers
// that look like spreadsheet serial dates is refused rather than read as a
// step index (see serialDates). A column of instants that are all local
// midnights east of UTC is read as the local dates (see utcClock).
func (t *timeDecoder) finish(kind TimeKind) error {
	if t.grain == Day {
		if shift, note := t.clock.localMidnights(); shift != 0 {
			for i := range t.periods {
				t.periods[i].Index += shift
			}
			t.note = note
		}
		return nil
	}
	if t.grain != Index || kind == TimeSteps {
		return nil
	}
	if kind == TimeAuto && t.notYears {
		return serialDates(t.periods)
	}
	for i, p := range t.periods {
		t.periods[i] = Period{Year, p.Index - 1970}
	}
	t.grain = Year
	return nil
}

// Spreadsheet programs count dates in days from 1899-12-30, so 2024-03-01
// is stored as 45352; a date column exported as plain numbers looks like
// this. serialFrom and serialTo bound the serial numbers taken for dates:
// 1960-01-01 to 2099-12-31.
const (
	serialFrom = 21916
	serialTo   = 73050
)

// serialDates refuses a column of step numbers that all fall in the range
// of spreadsheet serial dates from 1960 to 2099: read as a step index they
// would give a forecast without a calendar, silently. A true step index
// says so with TimeKind TimeSteps.
func serialDates(periods []Period) error {
	lo, hi := periods[0].Index, periods[0].Index
	for _, p := range periods {
		lo, hi = min(lo, p.Index), max(hi, p.Index)
	}
	if lo < serialFrom || hi > serialTo {
		return nil
	}
	day := func(n int) string {
		return time.Date(1899, 12, 30, 0, 0, 0, 0, time.UTC).AddDate(0, 0, n).Format("2006-01-02")
	}
	return &inputerr.Error{Option: "TimeKind", Msg: fmt.Sprintf(
		"periods run from %d to %d, which look like spreadsheet serial dates (%d is %s, %d is %s, counting days from 1899-12-30); "+
			"export the column as dates, or read the numbers as steps if they are step numbers",
		lo, hi, lo, day(lo), hi, day(hi))}
}

// rowBytes is the least memory one row takes once read: its period (16
// bytes), its value (8) and a 4-byte code per key column.
func rowBytes(keys int) int64 { return 24 + 4*int64(keys) }

// checkRowMemory refuses n rows (what says where the count comes from)
// that would not fit in opt.MemoryBudget.
func checkRowMemory(opt ReadOptions, n int64, what string) error {
	need := membudget.Mul(n, rowBytes(len(opt.Keys)))
	if err := membudget.Check(opt.MemoryBudget, fmt.Sprintf("reading the %d rows %s", n, what), need); err != nil {
		return &inputerr.Error{Err: err}
	}
	return nil
}
