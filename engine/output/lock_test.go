package output_test

import (
	"os"
	"path/filepath"
	"strconv"
	"strings"
	"syscall"
	"testing"

	"trueup/engine/output"
	"trueup/inputerr"
)

// holdLock takes the lock of the output folder dir as another process
// would (flock on its own open of ".<name>.lock" beside it, holding pid),
// until the test ends. flock locks belong to an open file, so this open
// conflicts with the package's own, as another process's would.
func holdLock(t *testing.T, dir string, pid string) {
	t.Helper()
	path := filepath.Join(filepath.Dir(dir), "."+filepath.Base(dir)+".lock")
	f, err := os.OpenFile(path, os.O_RDWR|os.O_CREATE, 0o666)
	if err != nil {
		t.Fatal(err)
	}
	if err := syscall.Flock(int(f.Fd()), syscall.LOCK_EX|syscall.LOCK_NB); err != nil {
		t.Fatal(err)
	}
	f.WriteString(pid + "\n")
	t.Cleanup(func() { os.Remove(path); f.Close() })
}

// TestLockedFolderIsRefused: while another process holds the folder's
// lock, Check and Write refuse with an input error naming that process,
// and the folder keeps its set; once it lets go, a run goes through and
// removes the lock file.
func TestLockedFolderIsRefused(t *testing.T) {
	res := quickResult(t)
	parent := t.TempDir()
	dir := filepath.Join(parent, "plan")
	if _, err := output.Write(dir, res, []string{"csv"}); err != nil {
		t.Fatal(err)
	}
	before := snapshot(t, dir)
	t.Run("held", func(t *testing.T) {
		holdLock(t, dir, "4242")
		for name, err := range map[string]error{
			"Check": output.Check(dir, output.Plan{Formats: []string{"csv"}}),
			"Write": func() error { _, err := output.Write(dir, res, []string{"parquet"}); return err }(),
		} {
			if !inputerr.Is(err) || inputerr.OptionOf(err) != "Out" || !strings.Contains(err.Error(), "process 4242") {
				t.Errorf("%s: %v, want an input error about Out naming process 4242", name, err)
			}
		}
		after := snapshot(t, dir)
		if len(after) != len(before) || after["forecasts.csv"] != before["forecasts.csv"] {
			t.Error("the folder changed while another process held its lock")
		}
	})
	if _, err := output.Write(dir, res, []string{"parquet"}); err != nil {
		t.Fatalf("after the holder let go: %v", err)
	}
	if _, err := os.Stat(filepath.Join(parent, ".plan.lock")); !os.IsNotExist(err) {
		t.Errorf("lock file left after the write: %v", err)
	}
}

// TestCheckKeepsTheLockUntilRelease: the lock Check takes lasts through
// the work to the write (a second process is refused meanwhile), and
// Release lets it go.
func TestCheckKeepsTheLockUntilRelease(t *testing.T) {
	dir := filepath.Join(t.TempDir(), "plan")
	if err := output.Check(dir, output.Plan{Formats: []string{"csv"}}); err != nil {
		t.Fatal(err)
	}
	lockFile := filepath.Join(filepath.Dir(dir), ".plan.lock")
	f, err := os.Open(lockFile)
	if err != nil {
		t.Fatal(err)
	}
	defer f.Close()
	if err := syscall.Flock(int(f.Fd()), syscall.LOCK_EX|syscall.LOCK_NB); err == nil {
		t.Error("another open of the lock file could lock it after Check")
	}
	b, _ := os.ReadFile(lockFile)
	if strings.TrimSpace(string(b)) != strconv.Itoa(os.Getpid()) {
		t.Errorf("lock file holds %q, want this process's id", b)
	}
	if _, err := output.Write(dir, quickResult(t), []string{"csv"}); err != nil {
		t.Fatal(err)
	}
	output.Release()
	if _, err := os.Stat(lockFile); !os.IsNotExist(err) {
		t.Errorf("lock file left after Release: %v", err)
	}
}
