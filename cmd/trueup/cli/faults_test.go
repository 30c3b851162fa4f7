package cli

// The fault-injection suite: it builds the trueup binary and interrupts,
// kills and starves it, and after each fault checks that the output folder
// holds the previous complete set or the new one, and that every file
// of it reads back. The runs use a small chain and the drift family, so
// the suite takes a few seconds.

import (
	"bytes"
	"crypto/sha256"
	"encoding/hex"
	"encoding/json"
	"errors"
	"fmt"
	"os"
	"os/exec"
	"path/filepath"
	"strings"
	"sync"
	"syscall"
	"testing"
	"time"

	"trueup/engine"
	"trueup/fixtures"
	"trueup/tableio"
)

var (
	binOnce sync.Once
	binPath string
	binErr  error
)

// binary builds the trueup command once for the suite.
func binary(t *testing.T) string {
	t.Helper()
	binOnce.Do(func() {
		dir, err := os.MkdirTemp("", "trueup-bin-")
		if err != nil {
			binErr = err
			return
		}
		binPath = filepath.Join(dir, "trueup")
		out, err := exec.Command("go", "build", "-o", binPath, "trueup/cmd/trueup").CombinedOutput()
		if err != nil {
			binErr = fmt.Errorf("go build: %v\n%s", err, out)
		}
	})
	if binErr != nil {
		t.Fatal(binErr)
	}
	return binPath
}

func TestMain(m *testing.M) {
	code := m.Run()
	if binPath != "" {
		os.RemoveAll(filepath.Dir(binPath))
	}
	os.Exit(code)
}

// forecastArgs are the arguments of a quick forecast of input into out.
func forecastArgs(input, out string, horizon int, formats string) []string {
	return []string{"forecast", "--input", input, "--time", fixtures.DemoTimeColumn, "--value", fixtures.DemoValueColumn,
		"--hierarchy", fixtures.DemoNest[0], "--hierarchy", fixtures.DemoNest[1], "--family", "drift", "--quiet",
		"--horizon", fmt.Sprint(horizon), "--format", formats, "--out", out}
}

// runBin runs the binary to the end and returns its exit status and stderr.
func runBin(t *testing.T, args ...string) (int, string) {
	t.Helper()
	cmd := exec.Command(binary(t), args...)
	var stderr bytes.Buffer
	cmd.Stderr = &stderr
	err := cmd.Run()
	var ee *exec.ExitError
	if err != nil && !errors.As(err, &ee) {
		t.Fatal(err)
	}
	return cmd.ProcessState.ExitCode(), stderr.String()
}

// readFolder maps every entry of dir to its bytes.
func readFolder(t *testing.T, dir string) map[string]string {
	t.Helper()
	entries, err := os.ReadDir(dir)
	if err != nil {
		t.Fatal(err)
	}
	out := map[string]string{}
	for _, e := range entries {
		b, err := os.ReadFile(filepath.Join(dir, e.Name()))
		if err != nil {
			t.Fatal(err)
		}
		out[e.Name()] = string(b)
	}
	return out
}

// completeSet checks that dir holds one complete output set: run.json
// lists every other file with its SHA-256 (recomputed with crypto/sha256),
// nothing else is there, and every table reads back. It returns the
// horizon the set was made with, which tells the runs of a test apart.
func completeSet(t *testing.T, dir string) int {
	t.Helper()
	files := readFolder(t, dir)
	var rep engine.RunReport
	if err := json.Unmarshal([]byte(files["run.json"]), &rep); err != nil {
		t.Fatalf("run.json: %v (folder holds %d files)", err, len(files))
	}
	listed := map[string]bool{"run.json": true}
	for _, f := range rep.Files {
		sum := sha256.Sum256([]byte(files[f.Name]))
		if hex.EncodeToString(sum[:]) != f.SHA256 {
			t.Errorf("%s does not match its SHA-256 in run.json: a mixed set", f.Name)
		}
		listed[f.Name] = true
		if format := tableio.Format(strings.TrimPrefix(filepath.Ext(f.Name), ".")); format != "" && f.Name != "report.html" {
			if _, err := tableio.ReadTable(filepath.Join(dir, f.Name), format); err != nil {
				t.Errorf("%s does not read back: %v", f.Name, err)
			}
		}
	}
	for name := range files {
		if !listed[name] {
			t.Errorf("%s is in the folder but not in its run.json", name)
		}
	}
	h, _ := rep.Options["horizon"].(float64)
	return int(h)
}

// sameFolder fails unless dir holds exactly the bytes of before, but for
// run.json's timings, which differ from run to run.
func sameFolder(t *testing.T, dir string, before map[string]string) {
	t.Helper()
	after := readFolder(t, dir)
	if len(after) != len(before) {
		t.Errorf("folder had %d files, now %d", len(before), len(after))
	}
	for name, b := range before {
		a := after[name]
		if name == "run.json" {
			a, b = withoutTimings(t, a), withoutTimings(t, b)
		}
		if a != b {
			t.Errorf("%s changed", name)
		}
	}
}

// withoutTimings returns run.json with its timings removed, re-encoded.
func withoutTimings(t *testing.T, runJSON string) string {
	t.Helper()
	var m map[string]any
	if err := json.Unmarshal([]byte(runJSON), &m); err != nil {
		t.Fatalf("run.json: %v", err)
	}
	delete(m, "timings_seconds")
	b, _ := json.Marshal(m)
	return string(b)
}

// besideOut lists the staging folders beside dir.
func besideOut(t *testing.T, dir string) []string {
	t.Helper()
	entries, err := os.ReadDir(filepath.Dir(dir))
	if err != nil {
		t.Fatal(err)
	}
	var out []string
	for _, e := range entries {
		if strings.HasPrefix(e.Name(), "."+filepath.Base(dir)+".") {
			out = append(out, e.Name())
		}
	}
	return out
}

// waitUntil polls cond until it holds or the process has ended.
func waitUntil(cond func() bool, done <-chan struct{}) {
	for {
		select {
		case <-done:
			return
		default:
		}
		if cond() {
			return
		}
		time.Sleep(200 * time.Microsecond)
	}
}

// staging reports whether a staging folder is beside dir: the run is
// writing its set.
func staging(dir string) func() bool {
	parent, prefix := filepath.Dir(dir), "."+filepath.Base(dir)+".trueup-staging-"
	return func() bool {
		entries, _ := os.ReadDir(parent)
		for _, e := range entries {
			if strings.HasPrefix(e.Name(), prefix) {
				return true
			}
		}
		return false
	}
}

// TestSignalsLeaveOneCompleteSet interrupts and kills runs that replace a
// horizon-3 set with a horizon-4 one, at several points: at once, after a
// few milliseconds, and as soon as the new set is being written. After
// each, the folder holds the old set byte for byte or the new set whole.
// A signal exits with 128 + its number and one line that says which
// folder state it left, and that line is checked against the folder.
func TestSignalsLeaveOneCompleteSet(t *testing.T) {
	input := smallInput(t)
	out := filepath.Join(t.TempDir(), "plan")
	if code, stderr := runBin(t, forecastArgs(input, out, 3, "parquet")...); code != 0 {
		t.Fatalf("first run: exit %d: %s", code, stderr)
	}
	old := readFolder(t, out)
	// A whole run's duration on this machine places the points inside it.
	began := time.Now()
	if code, stderr := runBin(t, forecastArgs(input, t.TempDir(), 4, "parquet,csv")...); code != 0 {
		t.Fatalf("timing run: exit %d: %s", code, stderr)
	}
	whole := time.Since(began)
	status := map[syscall.Signal]int{syscall.SIGINT: 130, syscall.SIGTERM: 143, syscall.SIGHUP: 129, syscall.SIGKILL: -1}
	// The points: at once (possibly before the handler is installed), a
	// third and two thirds into a run's duration (reading, fitting), as
	// the set is being written, and a moment after.
	points := []string{"start", "start+" + (whole / 3).String(), "start+" + (2 * whole / 3).String(), "writing", "writing+3ms"}
	for _, sig := range []syscall.Signal{syscall.SIGINT, syscall.SIGTERM, syscall.SIGHUP, syscall.SIGKILL} {
		for _, point := range points {
			t.Run(fmt.Sprintf("%v/%s", sig, point), func(t *testing.T) {
				cmd := exec.Command(binary(t), forecastArgs(input, out, 4, "parquet,csv")...)
				var stderr bytes.Buffer
				cmd.Stderr = &stderr
				if err := cmd.Start(); err != nil {
					t.Fatal(err)
				}
				done := make(chan struct{})
				waited := make(chan error, 1)
				go func() { waited <- cmd.Wait(); close(done) }()
				stage, delay, _ := strings.Cut(point, "+")
				if stage == "writing" {
					waitUntil(staging(out), done)
				}
				if d, err := time.ParseDuration(delay); err == nil {
					time.Sleep(d)
				}
				cmd.Process.Signal(sig)
				<-waited
				code, msg := cmd.ProcessState.ExitCode(), strings.TrimSpace(stderr.String())
				horizon := completeSet(t, out)
				t.Logf("exit %d, folder holds the horizon-%d set; %s", code, horizon, msg)
				switch {
				case code == 0:
					// The run ended before the signal came.
					if horizon != 4 {
						t.Errorf("run succeeded but the folder holds the horizon-%d set", horizon)
					}
				case code == -1 && stage == "start" && sig != syscall.SIGKILL && msg == "" && horizon == 3:
					// The signal came before the Go runtime had started
					// main and main had subscribed (on a loaded machine
					// start-up can take tens of milliseconds): the default
					// action ended the process, which had changed nothing.
					// At the writing points main is surely running, so
					// there the handler's status is required.
				case code != status[sig]:
					t.Errorf("exit %d, want %d; stderr: %s", code, status[sig], msg)
				case sig == syscall.SIGKILL:
				case strings.Contains(msg, "\n"):
					t.Errorf("more than one line: %q", msg)
				case strings.Contains(msg, "the output folder keeps its previous set"):
					if horizon != 3 {
						t.Errorf("%q, yet the folder holds the new set", msg)
					}
				case strings.Contains(msg, "new results were complete"):
					if horizon != 4 {
						t.Errorf("%q, yet the folder holds the old set", msg)
					}
				default:
					t.Errorf("unexpected message %q", msg)
				}
				if horizon == 3 {
					sameFolder(t, out, old)
				}
				if sig != syscall.SIGKILL {
					if left := besideOut(t, out); len(left) > 0 {
						t.Errorf("left beside the folder: %v", left)
					}
				}
				// The next run removes what a killed run left and replaces
				// the set; then the old set is put back for the next point.
				if code, stderr := runBin(t, forecastArgs(input, out, 3, "parquet")...); code != 0 {
					t.Fatalf("run after the fault: exit %d: %s", code, stderr)
				}
				if left := besideOut(t, out); len(left) > 0 {
					t.Errorf("the next run left %v", left)
				}
				sameFolder(t, out, old)
			})
		}
	}
}

// TestCorruptInputLeavesTheFolder feeds a truncated Parquet file and a
// garbled CSV: each is an input error (exit 2) and the folder is untouched.
func TestCorruptInputLeavesTheFolder(t *testing.T) {
	input := smallInput(t)
	out := filepath.Join(t.TempDir(), "plan")
	if code, stderr := runBin(t, forecastArgs(input, out, 3, "parquet")...); code != 0 {
		t.Fatalf("first run: exit %d: %s", code, stderr)
	}
	old := readFolder(t, out)
	data, err := os.ReadFile(input)
	if err != nil {
		t.Fatal(err)
	}
	dir := t.TempDir()
	truncated := filepath.Join(dir, "truncated.parquet")
	os.WriteFile(truncated, data[:len(data)/2], 0o644)
	garbled := filepath.Join(dir, "garbled.csv")
	os.WriteFile(garbled, append([]byte("month,region,store,category,sales\n2024-01,North,"), data[100:400]...), 0o644)
	for _, bad := range []string{truncated, garbled} {
		code, stderr := runBin(t, forecastArgs(bad, out, 4, "parquet")...)
		if code != 2 || !strings.Contains(stderr, filepath.Base(bad)) {
			t.Errorf("%s: exit %d, want 2 with a message naming the file; stderr: %s", filepath.Base(bad), code, stderr)
		}
		sameFolder(t, out, old)
	}
}

// mountTmpfs mounts a tmpfs of the given size at dir, or skips the test
// where mounting is impossible (it needs root, or a container allowed to
// mount).
func mountTmpfs(t *testing.T, dir, options string) {
	t.Helper()
	if os.Geteuid() != 0 {
		t.Skip("skipped: mounting a small tmpfs needs root")
	}
	if out, err := exec.Command("mount", "-t", "tmpfs", "-o", options, "tmpfs", dir).CombinedOutput(); err != nil {
		t.Skipf("skipped: cannot mount a tmpfs here: %v %s", err, out)
	}
	t.Cleanup(func() { exec.Command("umount", dir).Run() })
}

// copyFolder copies the plain files of src into dst.
func copyFolder(t *testing.T, src, dst string) {
	t.Helper()
	if err := os.MkdirAll(dst, 0o755); err != nil {
		t.Fatal(err)
	}
	for name, b := range readFolder(t, src) {
		if err := os.WriteFile(filepath.Join(dst, name), []byte(b), 0o644); err != nil {
			t.Fatal(err)
		}
	}
}

// TestFullDiskLeavesThePreviousSet writes a set on a tmpfs with room for
// the old set and part of a new one: the run fails (exit 1, naming the
// cause), the old set is intact and no staging folder is left to fill the
// disk further.
func TestFullDiskLeavesThePreviousSet(t *testing.T) {
	input := smallInput(t)
	first := filepath.Join(t.TempDir(), "plan")
	if code, stderr := runBin(t, forecastArgs(input, first, 3, "csv")...); code != 0 {
		t.Fatalf("first run: exit %d: %s", code, stderr)
	}
	old := readFolder(t, first)
	size := 0
	for _, b := range old {
		size += len(b)
	}
	mnt := t.TempDir()
	// Room for the old set and about as much again: not for the new set
	// in three formats with the report.
	mountTmpfs(t, mnt, fmt.Sprintf("size=%d", 2*size+64<<10))
	out := filepath.Join(mnt, "plan")
	copyFolder(t, first, out)
	code, stderr := runBin(t, forecastArgs(input, out, 4, "parquet,csv,arrow")...)
	if code != 1 || !strings.Contains(stderr, "no space left") {
		t.Errorf("exit %d, want 1 naming the full disk; stderr: %s", code, stderr)
	}
	sameFolder(t, out, old)
	if left := besideOut(t, out); len(left) > 0 {
		t.Errorf("left beside the folder: %v", left)
	}
}

// TestReadOnlyFolderIsRefusedBeforeTheWork remounts the tmpfs holding an
// output set read-only (chmod does not stop root): the run stops before
// reading the input, with exit 2 naming --out, and the set is untouched.
func TestReadOnlyFolderIsRefusedBeforeTheWork(t *testing.T) {
	input := smallInput(t)
	mnt := t.TempDir()
	mountTmpfs(t, mnt, "size=4m")
	out := filepath.Join(mnt, "plan")
	if code, stderr := runBin(t, forecastArgs(input, out, 3, "parquet")...); code != 0 {
		t.Fatalf("first run: exit %d: %s", code, stderr)
	}
	old := readFolder(t, out)
	if b, err := exec.Command("mount", "-o", "remount,ro", mnt).CombinedOutput(); err != nil {
		t.Fatalf("remount read-only: %v %s", err, b)
	}
	// A missing input shows the folder is checked first: reading it
	// would be a different error.
	code, stderr := runBin(t, forecastArgs(filepath.Join(mnt, "missing.parquet"), out, 4, "parquet")...)
	if code != 2 || !strings.HasPrefix(stderr, "trueup: --out:") {
		t.Errorf("exit %d, want 2 naming --out; stderr: %s", code, stderr)
	}
	sameFolder(t, out, old)
	completeSet(t, out)
}

// TestBacktestInterruptedWhileWriting interrupts a backtest as it writes
// its set into a folder holding a forecast's set and an earlier backtest's:
// the folder keeps both complete, and a finished backtest replaces only
// its own kind's files.
func TestBacktestInterruptedWhileWriting(t *testing.T) {
	input := smallInput(t)
	out := filepath.Join(t.TempDir(), "plan")
	backtest := []string{"backtest", "--input", input, "--time", fixtures.DemoTimeColumn, "--value", fixtures.DemoValueColumn,
		"--hierarchy", fixtures.DemoNest[0], "--hierarchy", fixtures.DemoNest[1], "--family", "drift", "--quiet",
		"--horizon", "3", "--origins", "2", "--format", "csv", "--out", out}
	if code, stderr := runBin(t, forecastArgs(input, out, 3, "parquet")...); code != 0 {
		t.Fatalf("forecast: exit %d: %s", code, stderr)
	}
	if code, stderr := runBin(t, backtest...); code != 0 {
		t.Fatalf("backtest: exit %d: %s", code, stderr)
	}
	before := readFolder(t, out)
	for _, name := range []string{"forecasts.parquet", "scores.csv", "report.html"} {
		if _, ok := before[name]; !ok {
			t.Fatalf("%s missing after a forecast and a backtest into one folder", name)
		}
	}
	for _, sig := range []syscall.Signal{syscall.SIGINT, syscall.SIGKILL} {
		cmd := exec.Command(binary(t), backtest...)
		var stderr bytes.Buffer
		cmd.Stderr = &stderr
		if err := cmd.Start(); err != nil {
			t.Fatal(err)
		}
		done := make(chan struct{})
		go func() { cmd.Wait(); close(done) }()
		waitUntil(staging(out), done)
		cmd.Process.Signal(sig)
		<-done
		code := cmd.ProcessState.ExitCode()
		t.Logf("%v: exit %d; %s", sig, code, strings.TrimSpace(stderr.String()))
		after := readFolder(t, out)
		if len(after) != len(before) {
			t.Errorf("%v: folder had %d files, now %d", sig, len(before), len(after))
		}
		for name, b := range before {
			a := after[name]
			if name == "run.json" {
				a, b = withoutTimings(t, a), withoutTimings(t, b)
			}
			if a != b {
				t.Errorf("%v: %s differs from the complete sets' (a backtest of the same data writes the same bytes)", sig, name)
			}
		}
	}
}

// runWithUmask runs the binary under a shell that sets the umask first
// (the umask is process-wide, so the test process keeps its own).
func runWithUmask(t *testing.T, umask string, args ...string) (int, string) {
	t.Helper()
	cmd := exec.Command("sh", append([]string{"-c", "umask " + umask + ` && exec "$0" "$@"`, binary(t)}, args...)...)
	var stderr bytes.Buffer
	cmd.Stderr = &stderr
	err := cmd.Run()
	var ee *exec.ExitError
	if err != nil && !errors.As(err, &ee) {
		t.Fatal(err)
	}
	return cmd.ProcessState.ExitCode(), stderr.String()
}

// modeAndGroup returns the permission bits (setgid and sticky included)
// and group of path.
func modeAndGroup(t *testing.T, path string) (uint32, int) {
	t.Helper()
	fi, err := os.Stat(path)
	if err != nil {
		t.Fatal(err)
	}
	st := fi.Sys().(*syscall.Stat_t)
	return st.Mode & 0o7777, int(st.Gid)
}

// TestUmaskAndGroupFolderAreKept: a new output folder and its files get
// the modes the umask gives any new folder and file (0777 and 0666 less
// the umask, POSIX mkdir(2)/open(2)); a group folder (setgid, 2770,
// another group) keeps its mode and group through a run, and its new
// files take its group. Changing the group needs root, so that part runs
// as root only.
func TestUmaskAndGroupFolderAreKept(t *testing.T) {
	input := smallInput(t)
	out := filepath.Join(t.TempDir(), "plan")
	if code, stderr := runWithUmask(t, "027", forecastArgs(input, out, 3, "parquet,csv,report")...); code != 0 {
		t.Fatalf("exit %d: %s", code, stderr)
	}
	if mode, _ := modeAndGroup(t, out); mode != 0o750 {
		t.Errorf("new folder under umask 027: mode %o, want 750", mode)
	}
	for name := range readFolder(t, out) {
		if mode, _ := modeAndGroup(t, filepath.Join(out, name)); mode != 0o640 {
			t.Errorf("%s under umask 027: mode %o, want 640", name, mode)
		}
	}
	if os.Geteuid() != 0 {
		t.Skip("giving the folder another group needs root")
	}
	const gid = 12345
	if err := os.Chown(out, 0, gid); err != nil {
		t.Fatal(err)
	}
	if err := os.Chmod(out, 0o770|os.ModeSetgid); err != nil {
		t.Fatal(err)
	}
	if code, stderr := runWithUmask(t, "007", forecastArgs(input, out, 3, "parquet,csv,report")...); code != 0 {
		t.Fatalf("exit %d: %s", code, stderr)
	}
	if mode, g := modeAndGroup(t, out); mode != 0o2770 || g != gid {
		t.Errorf("group folder after a run: mode %o group %d, want 2770 and %d", mode, g, gid)
	}
	for name := range readFolder(t, out) {
		if mode, g := modeAndGroup(t, filepath.Join(out, name)); mode != 0o660 || g != gid {
			t.Errorf("%s in the group folder under umask 007: mode %o group %d, want 660 and %d", name, mode, g, gid)
		}
	}
}

// TestInputInsideTheOutputFolder: a user's file named like a table,
// here the run's own input, stays through a run that does not write that
// name, even into a folder no run has written yet; a run that would write
// over it exits 2 before any work and leaves it.
func TestInputInsideTheOutputFolder(t *testing.T) {
	out := filepath.Join(t.TempDir(), "plan")
	if err := os.Mkdir(out, 0o755); err != nil {
		t.Fatal(err)
	}
	input := filepath.Join(out, "history.parquet")
	copyFile(t, smallInput(t), input)
	data, _ := os.ReadFile(input)
	if code, stderr := runBin(t, forecastArgs(input, out, 3, "csv")...); code != 0 {
		t.Fatalf("csv run: exit %d: %s", code, stderr)
	}
	if b, err := os.ReadFile(input); err != nil || !bytes.Equal(b, data) {
		t.Fatalf("the input history.parquet after a csv run: %v (changed: %v)", err, !bytes.Equal(b, data))
	}
	before := readFolder(t, out)
	code, stderr := runBin(t, forecastArgs(input, out, 3, "parquet")...)
	if code != 2 || !strings.Contains(stderr, "history.parquet") || !strings.Contains(stderr, "--out") {
		t.Errorf("parquet run over its own input: exit %d, %q; want exit 2 naming the file and --out", code, stderr)
	}
	sameFolder(t, out, before)
}

// copyFile copies the file src to dst.
func copyFile(t *testing.T, src, dst string) {
	t.Helper()
	b, err := os.ReadFile(src)
	if err != nil {
		t.Fatal(err)
	}
	if err := os.WriteFile(dst, b, 0o644); err != nil {
		t.Fatal(err)
	}
}

// TestLockedFolderRefusesEveryWriter: while another process holds the
// output folder's lock (here the test process, flock on the lock file
// beside the folder, its id inside), every command that writes a set
// exits 2 before any work, naming that process, and the folder is left.
func TestLockedFolderRefusesEveryWriter(t *testing.T) {
	input := smallInput(t)
	out := filepath.Join(t.TempDir(), "plan")
	if code, stderr := runBin(t, forecastArgs(input, out, 3, "csv")...); code != 0 {
		t.Fatalf("first run: exit %d: %s", code, stderr)
	}
	before := readFolder(t, out)
	lockFile := filepath.Join(filepath.Dir(out), ".plan.lock")
	f, err := os.OpenFile(lockFile, os.O_RDWR|os.O_CREATE, 0o666)
	if err != nil {
		t.Fatal(err)
	}
	defer f.Close()
	if err := syscall.Flock(int(f.Fd()), syscall.LOCK_EX|syscall.LOCK_NB); err != nil {
		t.Fatal(err)
	}
	fmt.Fprintf(f, "%d\n", os.Getpid())
	model := []string{"--time", fixtures.DemoTimeColumn, "--value", fixtures.DemoValueColumn,
		"--hierarchy", fixtures.DemoNest[0], "--hierarchy", fixtures.DemoNest[1], "--family", "drift", "--quiet", "--out", out}
	commands := map[string][]string{
		"forecast":  forecastArgs(input, out, 4, "csv"),
		"backtest":  append([]string{"backtest", "--input", input, "--origins", "2", "--horizon", "3"}, model...),
		"demo":      {"demo", "--family", "drift", "--horizon", "3", "--quiet", "--out", out},
		"reconcile": {"reconcile", "--base", filepath.Join(out, "forecasts.csv"), "--hierarchy", "region,store", "--quiet", "--out", out},
	}
	for name, args := range commands {
		code, stderr := runBin(t, args...)
		if code != 2 || !strings.Contains(stderr, fmt.Sprintf("process %d", os.Getpid())) {
			t.Errorf("%s into a locked folder: exit %d, %q; want exit 2 naming process %d", name, code, stderr, os.Getpid())
		}
	}
	sameFolder(t, out, before)
}

// TestConcurrentRunsIntoOneFolder starts two runs into one folder at once,
// twenty times: each either finishes or exits 2 because the other holds
// the lock, and the folder always holds one complete set, that of the
// run that finished last. A file made in the folder while a run writes
// its set is still there afterwards.
func TestConcurrentRunsIntoOneFolder(t *testing.T) {
	input := smallInput(t)
	out := filepath.Join(t.TempDir(), "plan")
	if code, stderr := runBin(t, forecastArgs(input, out, 2, "csv")...); code != 0 {
		t.Fatalf("first run: exit %d: %s", code, stderr)
	}
	refused := 0
	for trial := range 20 {
		var wg sync.WaitGroup
		codes := make([]int, 2)
		msgs := make([]string, 2)
		for i, h := range []int{3, 4} {
			wg.Add(1)
			go func() {
				defer wg.Done()
				codes[i], msgs[i] = runBin(t, forecastArgs(input, out, h, "csv")...)
			}()
		}
		wg.Wait()
		horizon := completeSet(t, out)
		for i := range codes {
			switch {
			case codes[i] == 2 && strings.Contains(msgs[i], "another trueup run"):
				refused++
				if other := []int{4, 3}[i]; horizon != other {
					t.Errorf("trial %d: the horizon-%d run was refused, yet the folder holds the horizon-%d set", trial, 7-other, horizon)
				}
			case codes[i] != 0:
				t.Errorf("trial %d: exit %d: %s", trial, codes[i], msgs[i])
			}
		}
	}
	t.Logf("%d of 40 runs were refused because the other run held the lock", refused)

	for trial := range 5 {
		cmd := exec.Command(binary(t), forecastArgs(input, out, 3, "csv,parquet")...)
		if err := cmd.Start(); err != nil {
			t.Fatal(err)
		}
		done := make(chan struct{})
		go func() { cmd.Wait(); close(done) }()
		waitUntil(staging(out), done)
		name := fmt.Sprintf("during-%d.txt", trial)
		if err := os.WriteFile(filepath.Join(out, name), []byte("mine"), 0o644); err != nil {
			t.Fatal(err)
		}
		<-done
		if code := cmd.ProcessState.ExitCode(); code != 0 {
			t.Fatalf("trial %d: exit %d", trial, code)
		}
		if b, err := os.ReadFile(filepath.Join(out, name)); err != nil || string(b) != "mine" {
			t.Errorf("trial %d: %s, made while the run wrote its set: %q, %v", trial, name, b, err)
		}
	}
}
