// Package output writes an engine.Result to files. Writers are registered
// by format name, as image.RegisterFormat registers decoders: the table
// formats (parquet, csv, arrow) register themselves here, and a later
// writer (an HTML report, say) registers itself from its own package, so
// that a command needs no edit to gain a format.
//
// Every file is written atomically (a temporary file renamed into place),
// and run.json, which lists the files, is written last.
package output

import (
	"encoding/json"
	"fmt"
	"os"
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
// empty list or an unknown name is an input error about option "Formats".
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

// Write writes res in every named format into dir (created if needed),
// then run.json listing every file. It records the file list in
// res.Report.Files and returns it.
func Write(dir string, res *engine.Result, formats []string) ([]string, error) {
	if err := os.MkdirAll(dir, 0o755); err != nil {
		return nil, &inputerr.Error{File: dir, Option: "Out", Msg: "cannot create the output directory", Err: err}
	}
	start := time.Now()
	var files []string
	for _, name := range formats {
		w := lookup(name)
		if w == nil {
			return files, inputerr.ForOption("Formats", "unknown output format %q", name)
		}
		written, err := w.Write(dir, res)
		files = append(files, written...)
		if err != nil {
			return files, err
		}
	}
	res.Report.Files = files
	if res.Report.Timings != nil {
		res.Report.Timings["write"] = time.Since(start).Seconds()
	}
	data, err := json.MarshalIndent(&res.Report, "", "  ")
	if err != nil {
		return files, err
	}
	path := filepath.Join(dir, "run.json")
	if err := tableio.WriteFileAtomic(path, append(data, '\n')); err != nil {
		return files, fmt.Errorf("write %s: %w", path, err)
	}
	return append(files, path), nil
}

// tableWriter writes the result's tables in one table format.
type tableWriter struct{ format tableio.Format }

func (t tableWriter) Write(dir string, res *engine.Result) ([]string, error) {
	return t.writeTables(dir, Tables(res))
}

// writeTables writes tables into dir, one file each.
func (t tableWriter) writeTables(dir string, tables []Table) ([]string, error) {
	var files []string
	for _, tb := range tables {
		path := filepath.Join(dir, tb.Name+t.format.Ext())
		if err := tableio.WriteTable(path, tb.Table, t.format); err != nil {
			return files, fmt.Errorf("write %s: %w", path, err)
		}
		files = append(files, path)
	}
	return files, nil
}

func init() {
	for _, f := range []tableio.Format{tableio.Parquet, tableio.CSV, tableio.Arrow} {
		Register(string(f), tableWriter{f})
	}
}
