package tableio

import (
	"bufio"
	"errors"
	"fmt"
	"io"
	"math/rand/v2"
	"os"
	"path/filepath"
	"strconv"
	"sync"
)

// pending holds the temporary files being written, so that an interrupted
// program can remove them (RemovePending) before it exits.
var pending = tempSet{paths: map[string]bool{}}

type tempSet struct {
	mu    sync.Mutex
	paths map[string]bool
}

func (s *tempSet) add(p string)    { s.mu.Lock(); s.paths[p] = true; s.mu.Unlock() }
func (s *tempSet) remove(p string) { s.mu.Lock(); delete(s.paths, p); s.mu.Unlock() }

// RemovePending deletes every temporary file a write in progress has
// created. The command line calls it when interrupted, so that an
// interrupted run leaves neither a half-written result nor a stray
// temporary file; finished files are untouched.
func RemovePending() {
	pending.mu.Lock()
	defer pending.mu.Unlock()
	for p := range pending.paths {
		os.Remove(p)
	}
}

// WriteFileAtomic writes data to path so that readers see either the old
// file or the complete new one, never a part: the bytes go to a temporary
// file in the same directory, which is synced, closed and renamed onto path.
func WriteFileAtomic(path string, data []byte) error {
	return writeAtomic(path, func(w io.Writer) error {
		_, err := w.Write(data)
		return err
	})
}

// writeAtomic runs write against a buffered temporary file next to path
// and renames it onto path once write, the flush, fsync and close all
// succeed. On any failure the temporary file is removed and path is left
// as it was.
func writeAtomic(path string, write func(w io.Writer) error) (err error) {
	dir, base := filepath.Split(path)
	if dir == "" {
		dir = "."
	}
	f, err := createTemp(dir, "."+base+".tmp-")
	if err != nil {
		return fmt.Errorf("write %s: %w", path, err)
	}
	tmp := f.Name()
	pending.add(tmp)
	defer pending.remove(tmp)
	defer func() {
		if err != nil {
			f.Close() // may already be closed; the first error is the one to report
			os.Remove(tmp)
			err = fmt.Errorf("write %s: %w", path, err)
		}
	}()
	bw := bufio.NewWriterSize(f, 1<<20)
	if err = write(bw); err != nil {
		return err
	}
	if err = bw.Flush(); err != nil {
		return err
	}
	if err = f.Sync(); err != nil {
		return err
	}
	if err = f.Close(); err != nil {
		return err
	}
	if err = os.Rename(tmp, path); err != nil {
		return err
	}
	syncDir(dir)
	return nil
}

// createTemp creates a new file in dir named prefix and a random number.
// Its mode is 0666 less the umask, as for any file a program creates (and
// its group a setgid folder's): os.CreateTemp would make it private.
func createTemp(dir, prefix string) (*os.File, error) {
	for {
		name := filepath.Join(dir, prefix+strconv.FormatUint(uint64(rand.Uint32()), 10))
		f, err := os.OpenFile(name, os.O_RDWR|os.O_CREATE|os.O_EXCL, 0o666)
		if !errors.Is(err, os.ErrExist) {
			return f, err
		}
	}
}

// syncDir makes the rename durable where the platform allows fsync on a
// directory; where it does not, the rename is still atomic, so errors are
// ignored.
func syncDir(dir string) {
	d, err := os.Open(dir)
	if err != nil {
		return
	}
	_ = d.Sync()
	d.Close()
}
