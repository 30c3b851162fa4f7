package output

import (
	"crypto/sha256"
	"encoding/hex"
	"encoding/json"
	"errors"
	"fmt"
	"io"
	"os"
	"path/filepath"
	"strconv"
	"strings"
	"sync"
	"syscall"

	"trueup/engine"
	"trueup/inputerr"
	"trueup/tableio"
)

// An output folder is replaced as a whole. Write builds the new set in a
// staging folder beside the output folder (same parent, so the same
// filesystem), then exchanges the two folders in one rename: a reader of
// the output folder sees the previous complete set or the new one, never
// a mix. The files the user keeps in the folder beside trueup's own (the
// demo's copy of its input, a backtest's tables) are carried into the
// staging folder as hard links before the writers run, so they survive the
// swap without being copied. trueup's own files are those the previous
// run.json lists (when it describes a set of the same kind, see setKind),
// run.json itself and the temporary files of an interrupted write; they
// are replaced, never carried over.
//
// Subfolders cannot be hard-linked, so a folder holding one is refused
// rather than emptied (which also keeps a home folder or a project folder
// given as --out by mistake from being swapped). A mount point cannot be
// renamed, so it is refused too: the set goes into a folder inside it.

// RunFile is the name of the run summary written last into every set.
const RunFile = "run.json"

// stagingTag marks a staging folder: ".<out>.trueup-staging-<pid>-<random>".
const stagingTag = ".trueup-staging-"

var (
	// swapMu orders a swap against an interrupt: Interrupt holds it to the
	// end, so a swap either finished before the interrupt or never starts.
	swapMu   sync.Mutex
	staging  = map[string]bool{} // staging folders of this process
	swapped  []string            // output folders swapped in by this process
	aborting bool
)

// Interrupt stops every set in progress: it removes this process's
// staging folders and blocks any later swap. It returns the output folders
// this process has already replaced (their new sets are complete). The
// command line calls it on SIGINT, SIGTERM or SIGHUP before exiting.
func Interrupt() (done []string) {
	swapMu.Lock() // never released: the process is about to exit
	aborting = true
	for s := range staging {
		// Writers may still be creating files in s: renamed, its path
		// takes no new file, and what is in it can then be removed.
		gone := s + ".discard"
		if os.Rename(s, gone) != nil {
			gone = s
		}
		for i := 0; i < 3 && os.RemoveAll(gone) != nil; i++ {
		}
	}
	return append([]string(nil), swapped...)
}

// Check reports whether dir can take an output set, before any work is
// done: it must be a folder or not exist yet, not a mount point, with a
// writable parent (the staging folder goes there), and hold no subfolder.
// Errors are input errors about option "Out".
func Check(dir string) error {
	if err := checkParent(dir); err != nil {
		return err
	}
	entries, err := os.ReadDir(dir)
	if errors.Is(err, os.ErrNotExist) {
		return nil
	}
	if err != nil {
		return &inputerr.Error{File: dir, Option: "Out", Msg: "cannot read the output folder", Err: err}
	}
	return checkEntries(dir, entries)
}

// checkParent makes sure dir is not a file and that its parent exists (it
// is created if needed) and takes new entries.
func checkParent(dir string) error {
	if fi, err := os.Stat(dir); err == nil && !fi.IsDir() {
		return &inputerr.Error{File: dir, Option: "Out", Msg: "is a file, not a folder"}
	}
	abs, err := filepath.Abs(dir)
	if err != nil {
		return &inputerr.Error{File: dir, Option: "Out", Msg: "cannot resolve the output folder", Err: err}
	}
	if cwd, err := os.Getwd(); err == nil && (cwd == abs || strings.HasPrefix(cwd, abs+string(filepath.Separator))) {
		return &inputerr.Error{File: dir, Option: "Out", Msg: "is the current folder or holds it; trueup replaces its output folder as a whole, so give a folder of its own, such as a new subfolder"}
	}
	parent := filepath.Dir(abs)
	if err := os.MkdirAll(parent, 0o755); err != nil {
		return &inputerr.Error{File: parent, Option: "Out", Msg: "cannot create the folder that holds the output folder", Err: err}
	}
	if err := syscall.Access(parent, 2|1); err != nil { // W_OK|X_OK
		return &inputerr.Error{File: parent, Option: "Out", Msg: "cannot write here: trueup builds the new output set beside the output folder and swaps it in", Err: err}
	}
	if fi, err := os.Stat(dir); err == nil && fi.IsDir() {
		if err := syscall.Access(dir, 2|1); err != nil {
			return &inputerr.Error{File: dir, Option: "Out", Msg: "the output folder is not writable", Err: err}
		}
		if pi, err := os.Stat(parent); err == nil && device(pi) != device(fi) {
			return &inputerr.Error{File: dir, Option: "Out", Msg: "is a mount point, which cannot be swapped for a new folder; give a folder inside it"}
		}
	}
	return nil
}

// device returns the device number of a file, which differs between a
// mount point and its parent.
func device(fi os.FileInfo) uint64 {
	if st, ok := fi.Sys().(*syscall.Stat_t); ok {
		return uint64(st.Dev)
	}
	return 0
}

// checkEntries refuses subfolders, which the swap could not carry over.
func checkEntries(dir string, entries []os.DirEntry) error {
	for _, e := range entries {
		if e.IsDir() {
			return &inputerr.Error{File: filepath.Join(dir, e.Name()), Option: "Out",
				Msg: "the output folder holds a subfolder; trueup replaces its output folder as a whole and keeps only plain files beside its own, so move the subfolder or choose another folder"}
		}
	}
	return nil
}

// setKind tells the two kinds of output set apart: a forecast's (forecast,
// demo, reconcile) and a backtest's. A folder may hold one of each, so
// that the report of a forecast shows a backtest's accuracy: a new set
// replaces the files of the previous set of its own kind and keeps the
// other kind's tables, as it keeps the user's files. run.json describes
// the latest set.
type setKind int

const (
	forecastSet setKind = iota
	backtestSet
)

// setTables names the tables of each kind of set (Tables and
// BacktestTables make them); with any table format's extension, and
// report.html, they are the kind's own files even when run.json describes
// the other kind. A test keeps the lists in step with the writers.
var setTables = map[setKind][]string{
	forecastSet: {"forecasts", "models", "residuals", "history"},
	backtestSet: {"backtest", "scores", "contributions", "drivers", "node_scores", "incoherence"},
}

// kindOf is the kind of set a run.json's command wrote.
func kindOf(command string) setKind {
	if command == "backtest" {
		return backtestSet
	}
	return forecastSet
}

// ownFiles names the files to replace in dir by a new set of kind: run.json,
// report.html, the kind's tables in every format and, when run.json
// describes a set of the same kind, the files it lists. It
// reads both the current form of the list (names with checksums) and the
// earlier one (paths).
func ownFiles(dir string, kind setKind) map[string]bool {
	own := map[string]bool{RunFile: true, "report.html": true}
	for _, name := range setTables[kind] {
		for _, f := range []tableio.Format{tableio.Parquet, tableio.CSV, tableio.Arrow} {
			own[name+f.Ext()] = true
		}
	}
	b, err := os.ReadFile(filepath.Join(dir, RunFile))
	if err != nil {
		return own
	}
	var rep struct {
		Command string            `json:"command"`
		Files   []json.RawMessage `json:"files"`
	}
	if json.Unmarshal(b, &rep) != nil || kindOf(rep.Command) != kind {
		return own
	}
	for _, raw := range rep.Files {
		var rec engine.FileRecord
		var path string
		switch {
		case json.Unmarshal(raw, &rec) == nil && rec.Name != "":
			own[filepath.Base(rec.Name)] = true
		case json.Unmarshal(raw, &path) == nil && path != "":
			own[filepath.Base(path)] = true
		}
	}
	return own
}

// isTemp reports whether name is a temporary file of an atomic write
// (".<name>.tmp-<random>"), left only by a killed run.
func isTemp(name string) bool {
	return strings.HasPrefix(name, ".") && strings.Contains(name, ".tmp-")
}

// removeStale deletes what killed runs left: staging folders beside dir
// whose process is gone, and temporary files inside dir.
func removeStale(dir string) {
	parent, base := filepath.Split(filepath.Clean(dir))
	if parent == "" {
		parent = "."
	}
	prefix := "." + base + stagingTag
	if entries, err := os.ReadDir(parent); err == nil {
		for _, e := range entries {
			rest, ok := strings.CutPrefix(e.Name(), prefix)
			if !ok {
				continue
			}
			pidText, _, _ := strings.Cut(rest, "-")
			if pid, err := strconv.Atoi(pidText); err == nil && pid != os.Getpid() && alive(pid) {
				continue // another run is writing into the same folder
			}
			os.RemoveAll(filepath.Join(parent, e.Name()))
		}
	}
	if entries, err := os.ReadDir(dir); err == nil {
		for _, e := range entries {
			if isTemp(e.Name()) && !e.IsDir() {
				os.Remove(filepath.Join(dir, e.Name()))
			}
		}
	}
}

// alive reports whether a process with this id exists.
func alive(pid int) bool {
	err := syscall.Kill(pid, 0)
	return err == nil || errors.Is(err, syscall.EPERM)
}

// stage makes a staging folder beside dir, holding hard links to the files
// of dir that the new set of kind does not replace.
func stage(dir string, kind setKind) (string, error) {
	parent, base := filepath.Split(filepath.Clean(dir))
	if parent == "" {
		parent = "."
	}
	entries, err := os.ReadDir(dir)
	if err != nil && !errors.Is(err, os.ErrNotExist) {
		return "", &inputerr.Error{File: dir, Option: "Out", Msg: "cannot read the output folder", Err: err}
	}
	if err := checkEntries(dir, entries); err != nil {
		return "", err
	}
	swapMu.Lock()
	defer swapMu.Unlock()
	if aborting {
		return "", errInterrupted
	}
	s, err := os.MkdirTemp(parent, "."+base+stagingTag+strconv.Itoa(os.Getpid())+"-")
	if err != nil {
		return "", &inputerr.Error{File: parent, Option: "Out", Msg: "cannot create the staging folder", Err: err}
	}
	staging[s] = true
	if err := os.Chmod(s, 0o755); err != nil {
		return s, err
	}
	own := ownFiles(dir, kind)
	for _, e := range entries {
		if own[e.Name()] || isTemp(e.Name()) {
			continue
		}
		if err := os.Link(filepath.Join(dir, e.Name()), filepath.Join(s, e.Name())); err != nil {
			return s, fmt.Errorf("keep %s beside the new results: %w", filepath.Join(dir, e.Name()), err)
		}
	}
	return s, nil
}

var errInterrupted = errors.New("interrupted")

// commit puts the staging folder s in place of dir in one step and removes
// what was there.
func commit(s, dir string) error {
	syncDir(s)
	swapMu.Lock()
	if aborting {
		swapMu.Unlock()
		return errInterrupted
	}
	var err error
	if _, statErr := os.Lstat(dir); errors.Is(statErr, os.ErrNotExist) {
		err = os.Rename(s, dir)
	} else {
		err = exchange(s, dir) // s now holds the previous set
	}
	if err == nil {
		swapped = append(swapped, dir)
	}
	swapMu.Unlock()
	if err != nil {
		return fmt.Errorf("put the new results in place of %s: %w", dir, err)
	}
	syncDir(filepath.Dir(filepath.Clean(dir)))
	discard(s)
	return nil
}

// discard removes a staging folder.
func discard(s string) {
	swapMu.Lock()
	defer swapMu.Unlock()
	os.RemoveAll(s)
	delete(staging, s)
}

// twoRenames swaps the folders a and b by renaming b aside, a onto b, and
// the old b onto a. A kill between the renames can leave b missing, so it
// serves only where the one-step exchange is unavailable.
func twoRenames(a, b string) error {
	aside := a + ".previous"
	if err := os.Rename(b, aside); err != nil {
		return err
	}
	if err := os.Rename(a, b); err != nil {
		os.Rename(aside, b)
		return err
	}
	return os.Rename(aside, a)
}

// checksum returns the hex SHA-256 of the file at path.
func checksum(path string) (string, error) {
	f, err := os.Open(path)
	if err != nil {
		return "", err
	}
	defer f.Close()
	h := sha256.New()
	if _, err := io.Copy(h, f); err != nil {
		return "", err
	}
	return hex.EncodeToString(h.Sum(nil)), nil
}

// syncDir makes renames inside dir durable where the platform allows fsync
// on a folder; where it does not, the rename is still atomic.
func syncDir(dir string) {
	d, err := os.Open(dir)
	if err != nil {
		return
	}
	_ = d.Sync()
	d.Close()
}
