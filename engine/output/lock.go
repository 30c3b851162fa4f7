package output

import (
	"errors"
	"fmt"
	"os"
	"path/filepath"
	"strconv"
	"strings"
	"sync"
	"syscall"

	"trueup/inputerr"
)

// Two runs writing into one output folder at once would each build a set
// from what they saw and swap it in, the later one undoing the earlier.
// So a run takes an exclusive lock on the folder first: flock on a lock
// file beside it (".<name>.lock" in the same parent, since the folder
// itself is swapped away), holding the process id so that a refused run
// can say which process holds it. The lock is held from the pre-work
// check (Check) to the end of the process, or of Write when Check was not
// called, and the lock file is removed on release.

// locks holds this process's locks by lock file path: flock locks belong
// to an open file, so a second open in the same process would conflict
// with the first.
var (
	locksMu sync.Mutex
	locks   = map[string]*os.File{}
	// stopped is set when the process is stopping (Interrupt): the main
	// goroutine may still reach lock between the signal handler's Release
	// and its exit, and must not leave a new lock file behind.
	stopped bool
)

// lockPath is the lock file of the output folder dir: ".<name>.lock"
// beside it, in the parent with its symbolic links resolved, so that two
// paths to one folder share one lock.
func lockPath(dir string) (string, error) {
	abs, err := filepath.Abs(dir)
	if err != nil {
		return "", err
	}
	parent, base := filepath.Split(abs)
	if real, err := filepath.EvalSymlinks(parent); err == nil {
		parent = real
	}
	return filepath.Join(parent, "."+base+".lock"), nil
}

// lock takes the lock on the output folder dir for this process. It
// reports whether this call took it (false when the process already held
// it). When another process holds it, the error is an input error naming
// that process.
func lock(dir string) (bool, error) {
	path, err := lockPath(dir)
	if err != nil {
		return false, &inputerr.Error{File: dir, Option: "Out", Msg: "cannot resolve the output folder", Err: err}
	}
	locksMu.Lock()
	defer locksMu.Unlock()
	if stopped {
		return false, &inputerr.Error{File: dir, Option: "Out", Msg: "the run is stopping"}
	}
	if locks[path] != nil {
		return false, nil
	}
	// A holder removes the lock file before it lets go, so a lock taken
	// on a file no longer at path is no lock: try again on the new one.
	for range 10 {
		f, err := os.OpenFile(path, os.O_RDWR|os.O_CREATE, 0o666)
		if err != nil {
			return false, &inputerr.Error{File: path, Option: "Out", Msg: "cannot create the lock file beside the output folder", Err: err}
		}
		if err := syscall.Flock(int(f.Fd()), syscall.LOCK_EX|syscall.LOCK_NB); err != nil {
			holder := readHolder(f)
			f.Close()
			if errors.Is(err, syscall.EWOULDBLOCK) {
				return false, &inputerr.Error{File: dir, Option: "Out", Msg: holder +
					" is writing into this output folder; wait for it to finish or give another folder (lock file " + path + ")"}
			}
			return false, &inputerr.Error{File: path, Option: "Out", Msg: "cannot lock the output folder", Err: err}
		}
		if !samePath(f, path) {
			f.Close()
			continue
		}
		if err := f.Truncate(0); err == nil {
			f.WriteAt([]byte(strconv.Itoa(os.Getpid())+"\n"), 0)
		}
		locks[path] = f
		return true, nil
	}
	return false, fmt.Errorf("lock %s: the lock file kept changing", path)
}

// readHolder names the process whose id a lock file holds: "another
// trueup run (process 123)", without the id when the holder has not
// written it yet.
func readHolder(f *os.File) string {
	b := make([]byte, 32)
	n, _ := f.ReadAt(b, 0)
	pid, err := strconv.Atoi(strings.TrimSpace(string(b[:n])))
	if err != nil || pid <= 0 {
		return "another trueup run"
	}
	return "another trueup run (process " + strconv.Itoa(pid) + ")"
}

// samePath reports whether the open file f is still the file at path.
func samePath(f *os.File, path string) bool {
	fi, err := f.Stat()
	if err != nil {
		return false
	}
	pi, err := os.Stat(path)
	return err == nil && os.SameFile(fi, pi)
}

// unlock releases this process's lock on dir, removing the lock file.
func unlock(dir string) {
	path, err := lockPath(dir)
	if err != nil {
		return
	}
	locksMu.Lock()
	defer locksMu.Unlock()
	release(path)
}

// release removes the lock file at path and lets the lock go; locksMu is
// held. Removing it first, while it is still locked, means that a run
// waiting on the old file finds it gone and takes a new one.
func release(path string) {
	f := locks[path]
	if f == nil {
		return
	}
	os.Remove(path)
	f.Close()
	delete(locks, path)
}

// Release lets go of every output folder lock this process holds (Check
// takes one and keeps it) and removes the lock files. The command line
// calls it before exiting; the system releases the locks of a process
// that ends without it, leaving only the lock file.
func Release() {
	locksMu.Lock()
	defer locksMu.Unlock()
	for path := range locks {
		release(path)
	}
}
