// Package output writes an engine.Result to files. Writers are registered
// by format name, as image.RegisterFormat registers decoders: the table
// formats (parquet, csv, arrow) register themselves here, and a later
// writer (an HTML report, say) registers itself from its own package, so
// that a command needs no edit to gain a format.
//
// A run's files form one output set, replaced together or not at all: they
// are written into a staging folder beside the output folder, run.json
// (which lists them with their SHA-256) last, and the staging folder is
// then swapped with the output folder in one step (swap.go).
package output

import (
	"fmt"
	"path/filepath"
	"sort"
	"strings"
	"sync"
	"time"

	"trueup/engine"
	"trueup/inputerr"
	"trueup/tableio"
)

// Writer writes one format of a result into dir and returns the paths it
// wrote.
type Writer interface {
	Write(dir string, res *engine.Result) ([]string, error)
}

// TableWriter is implemented by writers that work from the result's
// tables (Tables). The writers of one output set then share one copy of
// the tables, built once, instead of each building its own: at 40,000
// nodes the history and residuals tables alone are millions of rows.
type TableWriter interface {
	WriteTables(dir string, res *engine.Result, tables []Table) ([]string, error)
}

// WriterFunc adapts a function to the Writer interface.
type WriterFunc func(dir string, res *engine.Result) ([]string, error)

// Write calls f.
func (f WriterFunc) Write(dir string, res *engine.Result) ([]string, error) { return f(dir, res) }

var (
	mu      sync.RWMutex
	writers = map[string]Writer{}
)

// Register makes a writer available under a format name. Registering a
// name twice panics (a programmer error, as in database/sql.Register).
func Register(name string, w Writer) {
	mu.Lock()
	defer mu.Unlock()
	if _, dup := writers[name]; dup {
		panic("output: format " + name + " registered twice")
	}
	writers[name] = w
}

// Formats lists the registered format names, sorted.
func Formats() []string {
	mu.RLock()
	defer mu.RUnlock()
	names := make([]string, 0, len(writers))
	for n := range writers {
		names = append(names, n)
	}
	sort.Strings(names)
	return names
}

// ParseFormats reads a comma-separated list of format names such as
// "parquet,csv". Repeated names count once, in order of first mention; an
// empty list, an unknown name, or both "csv" and "csv-verbatim" (which
// write the same files) is an input error about option "Formats".
func ParseFormats(s string) ([]string, error) {
	var out []string
	seen := map[string]bool{}
	for _, part := range strings.Split(s, ",") {
		name := strings.ToLower(strings.TrimSpace(part))
		if name == "" || seen[name] {
			continue
		}
		if lookup(name) == nil {
			return nil, inputerr.ForOption("Formats", "unknown output format %q (formats: %s)", part, strings.Join(Formats(), ", "))
		}
		seen[name] = true
		out = append(out, name)
	}
	if seen[string(tableio.CSV)] && seen[VerbatimCSV] {
		return nil, inputerr.ForOption("Formats", "formats %q and %q both write the .csv tables; choose one", tableio.CSV, VerbatimCSV)
	}
	if len(out) == 0 {
		return nil, inputerr.ForOption("Formats", "no output format given (formats: %s)", strings.Join(Formats(), ", "))
	}
	return out, nil
}

func lookup(name string) Writer {
	mu.RLock()
	defer mu.RUnlock()
	return writers[name]
}

// Write writes res in every named format and run.json as one output set
// in place of the set in dir (created if needed), and returns the paths of
// the files, run.json last. The set is built in a staging folder beside dir
// and swapped in whole (see swap.go), so after an error, an interrupt or a
// kill dir holds the previous complete set or the new one. What killed
// runs left is removed first. run.json lists every other file of the set
// with its SHA-256 (also in res.Report.Files).
func Write(dir string, res *engine.Result, formats []string) ([]string, error) {
	for _, name := range formats {
		if lookup(name) == nil {
			return nil, inputerr.ForOption("Formats", "unknown output format %q", name)
		}
	}
	return writeStaged(dir, forecastSet, func(st *stagedSet) ([]string, error) { return writeSet(st, res, formats) })
}

// writeStaged replaces the output set of kind in dir with the one fill
// writes into the staging folder st.path (fill returns the file names,
// run.json last), and returns the paths of the new set's files in dir. It
// holds the lock on dir throughout (taking it unless Check took it).
func writeStaged(dir string, kind setKind, fill func(st *stagedSet) ([]string, error)) ([]string, error) {
	if err := checkParent(dir); err != nil {
		return nil, err
	}
	abs, err := filepath.Abs(dir)
	if err != nil {
		return nil, err
	}
	took, err := lock(abs)
	if err != nil {
		return nil, err
	}
	if took {
		defer unlock(abs)
	}
	removeStale(abs)
	st, err := stage(abs, kind)
	if err != nil {
		if st != nil {
			discard(st.path)
		}
		return nil, err
	}
	files, err := fill(st)
	if err == nil {
		err = st.inTheWay(files)
	}
	if err == nil {
		err = commit(st, files)
	}
	if err != nil {
		discard(st.path)
		return nil, err
	}
	paths := make([]string, len(files))
	for i, name := range files {
		paths[i] = filepath.Join(dir, name)
	}
	return paths, nil
}

// writeSet runs the writers into the staging folder, then writes run.json
// with the checksums, and returns the file names, run.json last.
func writeSet(st *stagedSet, res *engine.Result, formats []string) ([]string, error) {
	s := st.path
	start := time.Now()
	var names []string
	seen := map[string]bool{}
	var err error
	var tables []Table // built once, for every TableWriter of the set
	for _, name := range formats {
		w := lookup(name)
		var written []string
		if tw, ok := w.(TableWriter); ok {
			if tables == nil {
				tables = Tables(res)
			}
			written, err = tw.WriteTables(s, res, tables)
		} else {
			written, err = w.Write(s, res)
		}
		if err != nil {
			return nil, err
		}
		for _, p := range written {
			if n := filepath.Base(p); !seen[n] {
				seen[n] = true
				names = append(names, n)
			}
		}
	}
	if res.Report.Files, err = records(s, names); err != nil {
		return nil, err
	}
	if res.Report.Timings != nil {
		res.Report.Timings["write"] = time.Since(start).Seconds()
	}
	data, err := st.runJSON(&res.Report, names)
	if err != nil {
		return nil, err
	}
	if err := tableio.WriteFileAtomic(filepath.Join(s, RunFile), data); err != nil {
		return nil, err
	}
	return append(names, RunFile), nil
}

// records lists the named files of folder s with their checksums.
func records(s string, names []string) ([]engine.FileRecord, error) {
	out := make([]engine.FileRecord, len(names))
	for i, n := range names {
		sum, err := checksum(filepath.Join(s, n))
		if err != nil {
			return nil, err
		}
		out[i] = engine.FileRecord{Name: n, SHA256: sum}
	}
	return out, nil
}

// tableWriter writes the result's tables in one table format.
type tableWriter struct {
	format tableio.Format
	opt    tableio.WriteOptions
}

func (t tableWriter) Write(dir string, res *engine.Result) ([]string, error) {
	return t.WriteTables(dir, res, Tables(res))
}

// WriteTables writes tables into dir, one file each.
func (t tableWriter) WriteTables(dir string, _ *engine.Result, tables []Table) ([]string, error) {
	var files []string
	for _, tb := range tables {
		path := filepath.Join(dir, tb.Name+t.format.Ext())
		if err := tableio.WriteTableWith(path, tb.Table, t.format, t.opt); err != nil {
			return files, fmt.Errorf("write %s: %w", path, err)
		}
		files = append(files, path)
	}
	return files, nil
}

// VerbatimCSV is the format name of CSV tables whose text is written
// exactly as it is; "csv" puts a quote before text that a spreadsheet
// would run as a formula (see tableio.WriteOptions).
const VerbatimCSV = "csv-verbatim"

func init() {
	for _, f := range []tableio.Format{tableio.Parquet, tableio.CSV, tableio.Arrow} {
		Register(string(f), tableWriter{format: f})
	}
	Register(VerbatimCSV, tableWriter{format: tableio.CSV, opt: tableio.WriteOptions{VerbatimCSV: true}})
}
