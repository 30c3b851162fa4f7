package output

import (
	"crypto/sha256"
	"encoding/hex"
	"encoding/json"
	"errors"
	"fmt"
	"io"
	"math/rand/v2"
	"os"
	"path/filepath"
	"slices"
	"strconv"
	"strings"
	"sync"
	"syscall"

	"trueup/engine"
	"trueup/inputerr"
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
// staging folders, blocks any later swap and lets go of the output
// folders' locks. It returns the output folders
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
	locksMu.Lock()
	stopped = true // no new lock from here to the exit
	locksMu.Unlock()
	Release()
	return append([]string(nil), swapped...)
}

// Plan describes the set a command is about to write, for Check.
type Plan struct {
	Backtest bool     // a backtest's set, not a forecast's
	Formats  []string // as given to Write (or WriteBacktest, with "report")
	Inputs   []string // the files the command reads
}

// Check reports whether dir can take the output set p describes, before
// any work is done, and locks dir for this process until it exits
// (Release): dir must be a folder or not exist yet, not a mount point,
// with a writable parent (the staging folder and the lock file go
// there), hold no subfolder, no file of the user's with the name of a file
// the set writes, and none of the inputs where the set replaces it; and no
// other process may hold its lock. Errors are input errors about option
// "Out".
func Check(dir string, p Plan) error {
	if err := checkParent(dir); err != nil {
		return err
	}
	if _, err := lock(dir); err != nil {
		return err
	}
	entries, err := os.ReadDir(dir)
	if errors.Is(err, os.ErrNotExist) {
		return nil
	}
	if err != nil {
		return &inputerr.Error{File: dir, Option: "Out", Msg: "cannot read the output folder", Err: err}
	}
	if err := checkEntries(dir, entries); err != nil {
		return err
	}
	kind := forecastSet
	if p.Backtest {
		kind = backtestSet
	}
	replaced, other := previousSets(dir, kind)
	writes := plannedFiles(kind, p.Formats)
	for _, e := range entries {
		if writes[e.Name()] && !replaced[e.Name()] && !other.has(e.Name()) {
			return userFileInTheWay(dir, e.Name())
		}
	}
	for _, in := range p.Inputs {
		name, inside := inFolder(dir, in)
		switch {
		case !inside:
		case replaced[name]:
			return &inputerr.Error{File: in, Option: "Out", Msg: "the input is a file of the output folder's previous set, which this run replaces; copy it out of the folder first, or give another folder"}
		case writes[name]:
			return &inputerr.Error{File: in, Option: "Out", Msg: "the input is in the output folder under the name of a file this run writes; move it out of the folder first, or give another folder"}
		}
	}
	return nil
}

// plannedFiles names the files a set of kind writes in formats: the
// kind's tables in each table format, report.html for the report, and
// run.json. A writer of another format may write files not named here;
// Write refuses those that would replace a user's file.
func plannedFiles(kind setKind, formats []string) map[string]bool {
	names := map[string]bool{RunFile: true}
	for _, f := range formats {
		if tw, ok := lookup(f).(tableWriter); ok {
			for _, t := range setTables[kind] {
				names[t+tw.format.Ext()] = true
			}
		} else if f == "report" {
			names[reportFile] = true
		}
	}
	return names
}

// inFolder returns the name of the file at path and whether it is in the
// folder dir, symbolic links resolved.
func inFolder(dir, path string) (string, bool) {
	real, err := filepath.EvalSymlinks(path)
	if err != nil {
		return "", false // a missing input is reported when it is read
	}
	d, err := filepath.EvalSymlinks(dir)
	if err != nil {
		return "", false
	}
	return filepath.Base(real), filepath.Dir(real) == d
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
	if err := os.MkdirAll(parent, 0o777); err != nil {
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
// other kind's, as it keeps the user's files. run.json describes the
// latest set and lists the other kind's under "other_set", so that the
// next set of that kind knows them as trueup's.
type setKind int

const (
	forecastSet setKind = iota
	backtestSet
)

// setTables names the tables of each kind of set (Tables and
// BacktestTables make them), for the pre-work check of the files a set
// will write (Check). A test keeps the lists in step with the writers.
var setTables = map[setKind][]string{
	forecastSet: {"forecasts", "models", "residuals", "history"},
	backtestSet: {"backtest", "scores", "contributions", "drivers", "node_scores", "incoherence"},
}

// reportFile is the file the "report" format (package report) and the
// report command write.
const reportFile = "report.html"

// kindOf is the kind of set a run.json's command wrote.
func kindOf(command string) setKind {
	if command == "backtest" {
		return backtestSet
	}
	return forecastSet
}

// setRecord names the files of one output set: what a run.json lists of
// its own set ("files"), or of the other kind's set kept beside it
// ("other_set").
type setRecord struct {
	Command string              `json:"command"`
	Files   []engine.FileRecord `json:"files"`
}

// has reports whether the record lists name; a nil record lists nothing.
func (r *setRecord) has(name string) bool {
	if r == nil {
		return false
	}
	for _, f := range r.Files {
		if f.Name == name {
			return true
		}
	}
	return false
}

// keep returns the record less the files for which drop is true, or nil
// when it lists nothing else.
func (r *setRecord) keep(drop func(name string) bool) *setRecord {
	if r == nil {
		return nil
	}
	out := &setRecord{Command: r.Command}
	for _, f := range r.Files {
		if !drop(f.Name) {
			out.Files = append(out.Files, f)
		}
	}
	if len(out.Files) == 0 {
		return nil
	}
	return out
}

// previousSets reads dir's run.json for a new set of kind. It returns the
// names of the files the new set replaces (those the previous set of its
// kind listed, run.json and report.html) and the other kind's set, which
// the folder keeps (nil when there is none). Only what a run.json lists is
// trueup's, besides run.json and report.html, the names trueup gives its
// summary and its report in any output folder (report --from writes one
// outside a set, and it describes an earlier run): a file named like one
// of its tables that no run.json lists is the user's, and stays. Both
// forms of the list are read: names with checksums and the earlier paths.
func previousSets(dir string, kind setKind) (map[string]bool, *setRecord) {
	replaced := map[string]bool{RunFile: true, reportFile: true}
	b, err := os.ReadFile(filepath.Join(dir, RunFile))
	if err != nil {
		return replaced, nil
	}
	var rep struct {
		Command string            `json:"command"`
		Files   []json.RawMessage `json:"files"`
		Other   *setRecord        `json:"other_set"`
	}
	if json.Unmarshal(b, &rep) != nil {
		return replaced, nil
	}
	latest := &setRecord{Command: rep.Command, Files: fileRecords(rep.Files)}
	own, other := latest, rep.Other
	if kindOf(rep.Command) != kind {
		own, other = rep.Other, latest
	}
	if own != nil && kindOf(own.Command) == kind {
		for _, f := range own.Files {
			replaced[f.Name] = true
		}
	}
	if other != nil && kindOf(other.Command) == kind {
		other = nil
	}
	return replaced, other
}

// fileRecords reads a run.json's file list in either form: records with a
// name and checksum, or the earlier plain paths.
func fileRecords(raws []json.RawMessage) []engine.FileRecord {
	var out []engine.FileRecord
	for _, raw := range raws {
		var rec engine.FileRecord
		var path string
		switch {
		case json.Unmarshal(raw, &rec) == nil && rec.Name != "":
			out = append(out, engine.FileRecord{Name: filepath.Base(rec.Name), SHA256: rec.SHA256})
		case json.Unmarshal(raw, &path) == nil && path != "":
			out = append(out, engine.FileRecord{Name: filepath.Base(path)})
		}
	}
	return out
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

// fileID identifies a file by device and inode, which a hard link shares
// and a replaced file does not.
type fileID struct{ dev, ino uint64 }

func idOf(fi os.FileInfo) fileID {
	if st, ok := fi.Sys().(*syscall.Stat_t); ok {
		return fileID{uint64(st.Dev), uint64(st.Ino)}
	}
	return fileID{}
}

// stagedSet is a set being built: its staging folder and what the output
// folder held when staging began.
type stagedSet struct {
	path     string            // the staging folder
	dir      string            // the output folder
	replaced map[string]bool   // names in dir that the new set replaces
	other    *setRecord        // the other kind's set, kept (its files carried)
	seen     map[string]fileID // every entry of dir when staging began
}

// carried reports whether name was in the output folder when staging
// began and was linked into the staging folder to stay.
func (st *stagedSet) carried(name string) bool {
	_, ok := st.seen[name]
	return ok && !st.replaced[name] && !isTemp(name)
}

// stage makes a staging folder beside dir with dir's owner, group and
// mode (or, for a new folder, the umask's), holding hard links to the
// files of dir that the new set of kind does not replace.
func stage(dir string, kind setKind) (*stagedSet, error) {
	parent, base := filepath.Split(filepath.Clean(dir))
	if parent == "" {
		parent = "."
	}
	entries, err := os.ReadDir(dir)
	if err != nil && !errors.Is(err, os.ErrNotExist) {
		return nil, &inputerr.Error{File: dir, Option: "Out", Msg: "cannot read the output folder", Err: err}
	}
	if err := checkEntries(dir, entries); err != nil {
		return nil, err
	}
	swapMu.Lock()
	defer swapMu.Unlock()
	if aborting {
		return nil, errInterrupted
	}
	s, err := makeStaging(filepath.Join(parent, "."+base+stagingTag+strconv.Itoa(os.Getpid())+"-"))
	if err != nil {
		return nil, &inputerr.Error{File: parent, Option: "Out", Msg: "cannot create the staging folder", Err: err}
	}
	staging[s] = true
	st := &stagedSet{path: s, dir: dir, seen: map[string]fileID{}}
	if fi, err := os.Stat(dir); err == nil {
		if err := keepAttributes(s, dir, fi); err != nil {
			return st, err
		}
	}
	st.replaced, st.other = previousSets(dir, kind)
	for _, e := range entries {
		fi, err := e.Info()
		if err != nil {
			continue // removed since it was listed
		}
		st.seen[e.Name()] = idOf(fi)
		if !st.carried(e.Name()) {
			continue
		}
		if err := os.Link(filepath.Join(dir, e.Name()), filepath.Join(s, e.Name())); err != nil {
			return st, fmt.Errorf("keep %s beside the new results: %w", filepath.Join(dir, e.Name()), err)
		}
	}
	st.other = st.other.keep(func(name string) bool { return !st.carried(name) })
	return st, nil
}

// makeStaging creates a new folder named prefix and a random number. Its
// mode comes from the umask and its group from a setgid parent, as for
// any new folder.
func makeStaging(prefix string) (string, error) {
	for {
		s := prefix + strconv.FormatUint(uint64(rand.Uint32()), 10)
		err := os.Mkdir(s, 0o777)
		if !errors.Is(err, os.ErrExist) {
			return s, err
		}
	}
}

// keepAttributes gives the staging folder s the owner, group and mode
// (setgid and sticky bits included) of the output folder dir it will
// replace, so that a run changes what is in the folder, never who may use
// it. Only root or the owner can keep the owner, and then the run's user
// owns the folder; a group the run's user cannot give fails the run
// before anything is replaced.
func keepAttributes(s, dir string, fi os.FileInfo) error {
	st, ok := fi.Sys().(*syscall.Stat_t)
	if !ok {
		return nil
	}
	if os.Lchown(s, int(st.Uid), int(st.Gid)) != nil {
		if err := os.Lchown(s, -1, int(st.Gid)); err != nil {
			return &inputerr.Error{File: dir, Option: "Out", Err: err,
				Msg: "cannot give the new results the output folder's group (gid " + strconv.Itoa(int(st.Gid)) + "), so the run would change who may read them"}
		}
	}
	if err := syscall.Chmod(s, st.Mode&0o7777); err != nil {
		return &os.PathError{Op: "chmod", Path: s, Err: err}
	}
	return nil
}

// inTheWay refuses a set that writes a file of the user's: one that was in
// the output folder, is listed by no run.json and has the name of a file
// the new set writes. The user's file is untouched (the staging folder
// held a link to it).
func (st *stagedSet) inTheWay(written []string) error {
	for _, name := range written {
		if st.carried(name) && !st.other.has(name) {
			return userFileInTheWay(st.dir, name)
		}
	}
	return nil
}

func userFileInTheWay(dir, name string) error {
	return &inputerr.Error{File: filepath.Join(dir, name), Option: "Out",
		Msg: "no trueup run.json lists this file, and the run writes a file of that name; move or rename it, or give another folder"}
}

// runJSON is the run.json of a set: the run's report (rep, a
// *engine.RunReport or *engine.BacktestReport) and, as "other_set", the
// other kind's set the folder keeps, less the files this set writes again
// (names, such as report.html).
func (st *stagedSet) runJSON(rep any, names []string) ([]byte, error) {
	other := st.other.keep(func(name string) bool { return slices.Contains(names, name) })
	var v any
	switch r := rep.(type) {
	case *engine.RunReport:
		v = struct {
			*engine.RunReport
			Other *setRecord `json:"other_set,omitempty"`
		}{r, other}
	case *engine.BacktestReport:
		v = struct {
			*engine.BacktestReport
			Other *setRecord `json:"other_set,omitempty"`
		}{r, other}
	default:
		return nil, fmt.Errorf("run.json of a %T", rep)
	}
	b, err := json.MarshalIndent(v, "", "  ")
	if err != nil {
		return nil, err
	}
	return append(b, '\n'), nil
}

var errInterrupted = errors.New("interrupted")

// commit puts the staging folder in place of the output folder in one
// step and removes what was there. written names the new set's files.
//
// The user may change the output folder while the set is written. What
// changed since staging began is carried into the staging folder just
// before the exchange, and what changed in between into the new folder
// just after it (carryLate), so a file created, replaced or removed in the
// output folder during a run stays as the user left it.
func commit(st *stagedSet, written []string) error {
	syncDir(st.path)
	newNames := map[string]bool{}
	for _, n := range written {
		newNames[n] = true
	}
	swapMu.Lock()
	if aborting {
		swapMu.Unlock()
		return errInterrupted
	}
	err := carryLate(st.dir, st.path, st, newNames, false)
	switch {
	case err != nil:
	case !exists(st.dir):
		if err = os.Rename(st.path, st.dir); err == nil {
			swapped = append(swapped, st.dir)
		}
	default:
		if err = exchange(st.path, st.dir); err != nil {
			break
		}
		// st.path now holds the previous set.
		swapped = append(swapped, st.dir)
		err = carryLate(st.path, st.dir, st, newNames, true)
		switch {
		case err == nil:
		case inputerr.Is(err) && exchange(st.path, st.dir) == nil:
			// A file in the way, found before anything was moved: the
			// previous set is back in place.
			swapped = swapped[:len(swapped)-1]
		default:
			// The new set stays; the previous folder, holding what could
			// not be carried, is kept aside.
			aside := strings.Replace(st.path, stagingTag, ".trueup-previous-", 1)
			if os.Rename(st.path, aside) == nil {
				err = fmt.Errorf("%w; the previous folder is kept as %s", err, aside)
			}
		}
	}
	swapMu.Unlock()
	if err != nil {
		if inputerr.Is(err) {
			return err
		}
		return fmt.Errorf("put the new results in place of %s: %w", st.dir, err)
	}
	syncDir(filepath.Dir(filepath.Clean(st.dir)))
	discard(st.path)
	return nil
}

// carryLate brings what the user changed in the folder from since staging
// began into the folder to: a file created or replaced there is linked
// into to (after the exchange a new subfolder is moved too), and a
// carried file the user removed is removed from to. Before the exchange
// from is the output folder and to the staging folder; after it, the
// other way round. A new file with the name of one the set writes cannot
// be kept beside it: the set is then refused (written names them).
func carryLate(from, to string, st *stagedSet, written map[string]bool, after bool) error {
	entries, err := os.ReadDir(from)
	if errors.Is(err, os.ErrNotExist) {
		return nil // a first run: no output folder yet
	}
	if err != nil {
		return err
	}
	present := map[string]bool{}
	var late []os.FileInfo
	for _, e := range entries {
		name := e.Name()
		present[name] = true
		if name == RunFile || name == reportFile || isTemp(name) {
			continue // trueup's own, never the user's
		}
		fi, err := os.Lstat(filepath.Join(from, name))
		if err != nil {
			continue // removed meanwhile
		}
		if id, ok := st.seen[name]; ok && id == idOf(fi) {
			continue // as it was when staging began
		}
		if ti, err := os.Lstat(filepath.Join(to, name)); err == nil && os.SameFile(fi, ti) {
			continue // carried already
		}
		if written[name] {
			return userFileInTheWay(st.dir, name)
		}
		if fi.IsDir() && !after {
			continue // a folder cannot be linked: it is moved after the exchange
		}
		late = append(late, fi)
	}
	for _, fi := range late {
		src, dst := filepath.Join(from, fi.Name()), filepath.Join(to, fi.Name())
		if fi.IsDir() {
			if err := os.Rename(src, dst); err != nil {
				return err
			}
			continue
		}
		tmp := filepath.Join(to, "."+fi.Name()+".tmp-late")
		os.Remove(tmp)
		if err := os.Link(src, tmp); err != nil {
			return err
		}
		if err := os.Rename(tmp, dst); err != nil {
			os.Remove(tmp)
			return err
		}
	}
	for name, id := range st.seen {
		if !st.carried(name) || present[name] {
			continue
		}
		if ti, err := os.Lstat(filepath.Join(to, name)); err == nil && idOf(ti) == id {
			os.Remove(filepath.Join(to, name))
		}
	}
	return nil
}

// exists reports whether there is anything at path.
func exists(path string) bool {
	_, err := os.Lstat(path)
	return err == nil
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
