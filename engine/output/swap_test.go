package output_test

import (
	"context"
	"crypto/sha256"
	"encoding/hex"
	"encoding/json"
	"errors"
	"os"
	"path/filepath"
	"sort"
	"strings"
	"syscall"
	"testing"

	"trueup/engine"
	"trueup/engine/output"
	"trueup/inputerr"
	"trueup/models/families"
)

// errHalfway is what the failing test writer returns after writing a file.
var errHalfway = errors.New("disk gave out halfway")

func init() {
	// A format that writes one file into the set, then fails, as a full
	// disk would in the middle of a run's writing.
	output.Register("test-fails-halfway", output.WriterFunc(func(dir string, _ *engine.Result) ([]string, error) {
		p := filepath.Join(dir, "forecasts.parquet")
		if err := os.WriteFile(p, []byte("half a set"), 0o644); err != nil {
			return nil, err
		}
		return []string{p}, errHalfway
	}))
}

// quickResult forecasts the small chain with the drift family.
func quickResult(t *testing.T) *engine.Result {
	t.Helper()
	res, err := engine.Forecast(context.Background(), smallChain(t), engine.Options{Horizon: 3,
		Model: families.Spec{Family: "drift"}, Fitter: engine.Local{Workers: 2}})
	if err != nil {
		t.Fatal(err)
	}
	return res
}

// snapshot maps every entry of dir to its bytes.
func snapshot(t *testing.T, dir string) map[string]string {
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

// checkSums verifies that run.json lists every other file of the folder
// (besides those named in keep) with its SHA-256, computed here with
// crypto/sha256.
func checkSums(t *testing.T, dir string, keep ...string) {
	t.Helper()
	b, err := os.ReadFile(filepath.Join(dir, output.RunFile))
	if err != nil {
		t.Fatal(err)
	}
	var rep engine.RunReport
	if err := json.Unmarshal(b, &rep); err != nil {
		t.Fatal(err)
	}
	listed := map[string]bool{output.RunFile: true}
	for _, k := range keep {
		listed[k] = true
	}
	for _, f := range rep.Files {
		data, err := os.ReadFile(filepath.Join(dir, f.Name))
		if err != nil {
			t.Fatalf("run.json lists %s: %v", f.Name, err)
		}
		sum := sha256.Sum256(data)
		if got := hex.EncodeToString(sum[:]); got != f.SHA256 {
			t.Errorf("%s: run.json says sha256 %s, the file has %s", f.Name, f.SHA256, got)
		}
		listed[f.Name] = true
	}
	for name := range snapshot(t, dir) {
		if !listed[name] {
			t.Errorf("%s is in the folder but neither in run.json nor the user's", name)
		}
	}
}

// noStaging fails if a staging folder is left beside dir.
func noStaging(t *testing.T, dir string) {
	t.Helper()
	entries, _ := os.ReadDir(filepath.Dir(dir))
	for _, e := range entries {
		if strings.Contains(e.Name(), "staging") {
			t.Errorf("left behind: %s", e.Name())
		}
	}
}

func TestSetIsReplacedWholeAndUserFilesKept(t *testing.T) {
	res := quickResult(t)
	dir := filepath.Join(t.TempDir(), "plan")
	if _, err := output.Write(dir, res, []string{"parquet"}); err != nil {
		t.Fatal(err)
	}
	if err := os.WriteFile(filepath.Join(dir, "notes.txt"), []byte("mine"), 0o644); err != nil {
		t.Fatal(err)
	}
	files, err := output.Write(dir, res, []string{"csv"})
	if err != nil {
		t.Fatal(err)
	}
	got := snapshot(t, dir)
	var names []string
	for n := range got {
		names = append(names, n)
	}
	sort.Strings(names)
	want := "forecasts.csv history.csv models.csv notes.txt residuals.csv run.json"
	if strings.Join(names, " ") != want {
		t.Errorf("folder holds %v, want %s (the first run's parquet files replaced, the user's file kept)", names, want)
	}
	if got["notes.txt"] != "mine" {
		t.Errorf("user's file changed: %q", got["notes.txt"])
	}
	if len(files) != 5 || filepath.Base(files[4]) != output.RunFile || filepath.Dir(files[0]) != dir {
		t.Errorf("Write returned %v", files)
	}
	checkSums(t, dir, "notes.txt")
	noStaging(t, dir)
}

func TestFailedWriteLeavesThePreviousSet(t *testing.T) {
	res := quickResult(t)
	dir := filepath.Join(t.TempDir(), "plan")
	if _, err := output.Write(dir, res, []string{"parquet"}); err != nil {
		t.Fatal(err)
	}
	before := snapshot(t, dir)
	_, err := output.Write(dir, res, []string{"csv", "test-fails-halfway"})
	if !errors.Is(err, errHalfway) {
		t.Fatalf("got %v, want the writer's error", err)
	}
	after := snapshot(t, dir)
	if len(after) != len(before) {
		t.Errorf("folder had %d files, now %d", len(before), len(after))
	}
	for n, b := range before {
		if after[n] != b {
			t.Errorf("%s changed by a failed write", n)
		}
	}
	checkSums(t, dir)
	noStaging(t, dir)
}

func TestStaleStagingAndTempFilesAreRemoved(t *testing.T) {
	res := quickResult(t)
	parent := t.TempDir()
	dir := filepath.Join(parent, "plan")
	if _, err := output.Write(dir, res, []string{"parquet"}); err != nil {
		t.Fatal(err)
	}
	// What a killed run leaves: a staging folder of a process that no
	// longer exists (process ids stay below 2^22 on Linux) and a
	// temporary file of an atomic write.
	stale := filepath.Join(parent, ".plan.trueup-staging-99999999-123")
	if err := os.MkdirAll(stale, 0o755); err != nil {
		t.Fatal(err)
	}
	temp := filepath.Join(dir, ".residuals.csv.tmp-42")
	if err := os.WriteFile(temp, []byte("partial"), 0o644); err != nil {
		t.Fatal(err)
	}
	if _, err := output.Write(dir, res, []string{"parquet"}); err != nil {
		t.Fatal(err)
	}
	for _, p := range []string{stale, temp} {
		if _, err := os.Stat(p); !errors.Is(err, os.ErrNotExist) {
			t.Errorf("%s was not removed", p)
		}
	}
	checkSums(t, dir)
}

func TestCheckRefusesWhatCannotTakeASet(t *testing.T) {
	base := t.TempDir()
	file := filepath.Join(base, "afile")
	os.WriteFile(file, []byte("x"), 0o644)
	withSub := filepath.Join(base, "withsub")
	os.MkdirAll(filepath.Join(withSub, "inner"), 0o755)
	os.WriteFile(filepath.Join(withSub, output.RunFile), []byte("{}"), 0o644)
	for _, dir := range []string{file, withSub, filepath.Join(file, "below")} {
		err := output.Check(dir, output.Plan{})
		if !inputerr.Is(err) || inputerr.OptionOf(err) != "Out" {
			t.Errorf("Check(%s) = %v, want an input error about Out", dir, err)
		}
	}
	empty := filepath.Join(base, "empty")
	os.MkdirAll(empty, 0o755)
	plain := filepath.Join(base, "plain")
	os.MkdirAll(plain, 0o755)
	os.WriteFile(filepath.Join(plain, "sales.csv"), []byte("x"), 0o644)
	for _, dir := range []string{empty, plain, filepath.Join(base, "new", "deeper")} {
		if err := output.Check(dir, output.Plan{}); err != nil {
			t.Errorf("Check(%s) = %v, want nil", dir, err)
		}
	}
}

// TestBacktestAndForecastShareAFolder: a backtest into a forecast's folder
// keeps the forecast's tables (the report shows both), and a forecast
// after it replaces its own tables and keeps the backtest's.
func TestBacktestAndForecastShareAFolder(t *testing.T) {
	res := quickResult(t)
	bt, err := engine.Backtest(context.Background(), smallChain(t), engine.BacktestOptions{
		Options: engine.Options{Model: families.Spec{Family: "drift"}, Horizon: 3}, Origins: 2})
	if err != nil {
		t.Fatal(err)
	}
	dir := filepath.Join(t.TempDir(), "plan")
	if _, err := output.Write(dir, res, []string{"csv"}); err != nil {
		t.Fatal(err)
	}
	if _, err := output.WriteBacktest(dir, bt, []string{"csv"}, nil); err != nil {
		t.Fatal(err)
	}
	files := snapshot(t, dir)
	for _, name := range []string{"forecasts.csv", "scores.csv"} {
		if _, ok := files[name]; !ok {
			t.Errorf("after the backtest, %s is missing", name)
		}
	}
	if _, err := output.Write(dir, res, []string{"parquet"}); err != nil {
		t.Fatal(err)
	}
	files = snapshot(t, dir)
	if _, ok := files["forecasts.csv"]; ok {
		t.Error("the first forecast's csv tables survived a forecast that wrote parquet")
	}
	for _, name := range []string{"forecasts.parquet", "scores.csv"} {
		if _, ok := files[name]; !ok {
			t.Errorf("after the second forecast, %s is missing", name)
		}
	}
	noStaging(t, dir)
}

// TestSetTablesNameEveryTable keeps the swap's lists of each kind's tables
// in step with the tables the writers make.
func TestSetTablesNameEveryTable(t *testing.T) {
	res := quickResult(t)
	bt, err := engine.Backtest(context.Background(), smallChain(t), engine.BacktestOptions{
		Options: engine.Options{Model: families.Spec{Family: "drift"}, Horizon: 3}, Origins: 2})
	if err != nil {
		t.Fatal(err)
	}
	var made, listed []string
	for _, tb := range output.Tables(res) {
		made = append(made, tb.Name)
	}
	for _, tb := range output.BacktestTables(bt) {
		made = append(made, tb.Name)
	}
	listed = append(append(listed, output.ForecastSetTables...), output.BacktestSetTables...)
	sort.Strings(made)
	sort.Strings(listed)
	if strings.Join(made, " ") != strings.Join(listed, " ") {
		t.Errorf("writers make %v, the swap knows %v", made, listed)
	}
}

// TestCurrentFolderIsRefused: swapping the current folder away would leave
// the user's shell in a deleted folder.
func TestCurrentFolderIsRefused(t *testing.T) {
	dir := t.TempDir()
	t.Chdir(dir)
	for _, out := range []string{".", dir, filepath.Dir(dir)} {
		if err := output.Check(out, output.Plan{}); !inputerr.Is(err) || !strings.Contains(err.Error(), "current folder") {
			t.Errorf("Check(%s) = %v, want an input error about the current folder", out, err)
		}
	}
	if err := output.Check("plan", output.Plan{}); err != nil {
		t.Errorf("a new subfolder of the current one: %v", err)
	}
	if _, err := output.Write("plan", quickResult(t), []string{"csv"}); err != nil {
		t.Fatal(err)
	}
	checkSums(t, filepath.Join(dir, "plan"))
}

// TestFolderOwnerGroupAndModeAreKept: a run replaces what is in the
// folder, not who may use it. A group folder (setgid, mode 2770, another
// group) keeps its mode and group, and the new files take the group, as
// files created in a setgid folder do (POSIX mkdir(2)/open(2) on Linux).
// Changing the group needs root or membership, so the group part runs as
// root only.
func TestFolderOwnerGroupAndModeAreKept(t *testing.T) {
	res := quickResult(t)
	dir := filepath.Join(t.TempDir(), "plan")
	if err := os.Mkdir(dir, 0o700); err != nil {
		t.Fatal(err)
	}
	gid := os.Getgid()
	if os.Geteuid() == 0 {
		gid = 12345
		if err := os.Chown(dir, 0, gid); err != nil {
			t.Fatal(err)
		}
	}
	if err := os.Chmod(dir, 0o2770|os.ModeSetgid); err != nil {
		t.Fatal(err)
	}
	for run := range 2 {
		if _, err := output.Write(dir, res, []string{"csv"}); err != nil {
			t.Fatal(err)
		}
		fi, err := os.Stat(dir)
		if err != nil {
			t.Fatal(err)
		}
		st := fi.Sys().(*syscall.Stat_t)
		if mode := st.Mode & 0o7777; mode != 0o2770 || int(st.Gid) != gid {
			t.Errorf("run %d: folder mode %o group %d, want 2770 and %d", run+1, mode, st.Gid, gid)
		}
		fi, err = os.Stat(filepath.Join(dir, "forecasts.csv"))
		if err != nil {
			t.Fatal(err)
		}
		if g := int(fi.Sys().(*syscall.Stat_t).Gid); g != gid {
			t.Errorf("run %d: forecasts.csv has group %d, want the folder's %d", run+1, g, gid)
		}
	}
}

// TestUserFilesNamedLikeTablesStay: only what a run.json lists is
// trueup's. A user's history.csv (here the run's own input) in a new
// output folder stays through a run that writes parquet; a run that would
// write history.csv over it is refused before any work (Check) and at the
// write, and the file is untouched.
func TestUserFilesNamedLikeTablesStay(t *testing.T) {
	res := quickResult(t)
	dir := filepath.Join(t.TempDir(), "plan")
	if err := os.Mkdir(dir, 0o755); err != nil {
		t.Fatal(err)
	}
	mine := filepath.Join(dir, "history.csv")
	if err := os.WriteFile(mine, []byte("month,sales\n2024-01-01,5\n"), 0o644); err != nil {
		t.Fatal(err)
	}
	parquet := output.Plan{Formats: []string{"parquet", "report"}, Inputs: []string{mine}}
	if err := output.Check(dir, parquet); err != nil {
		t.Fatalf("Check with parquet: %v", err)
	}
	if _, err := output.Write(dir, res, []string{"parquet"}); err != nil {
		t.Fatal(err)
	}
	if b, err := os.ReadFile(mine); err != nil || string(b) != "month,sales\n2024-01-01,5\n" {
		t.Fatalf("the user's history.csv after a parquet run: %q, %v", b, err)
	}
	checkSums(t, dir, "history.csv")
	if err := output.Check(dir, output.Plan{Formats: []string{"csv"}}); !inputerr.Is(err) || !strings.Contains(err.Error(), "history.csv") {
		t.Errorf("Check with csv: %v, want an input error naming history.csv", err)
	}
	if err := output.Check(dir, output.Plan{Formats: []string{"parquet"}, Inputs: []string{mine}}); err != nil {
		t.Errorf("Check of an input in the folder that the run keeps: %v", err)
	}
	before := snapshot(t, dir)
	if _, err := output.Write(dir, res, []string{"csv"}); !inputerr.Is(err) || !strings.Contains(err.Error(), "history.csv") {
		t.Errorf("Write with csv: %v, want an input error naming history.csv", err)
	}
	if after := snapshot(t, dir); len(after) != len(before) || after["history.csv"] != before["history.csv"] {
		t.Error("a refused write changed the folder")
	}
	noStaging(t, dir)
}

// TestInputOfThePreviousSetIsRefused: an input that the previous set's
// run.json lists would be replaced by the run, so Check refuses it.
func TestInputOfThePreviousSetIsRefused(t *testing.T) {
	dir := filepath.Join(t.TempDir(), "plan")
	if _, err := output.Write(dir, quickResult(t), []string{"csv"}); err != nil {
		t.Fatal(err)
	}
	for _, formats := range [][]string{{"csv"}, {"parquet"}} {
		err := output.Check(dir, output.Plan{Formats: formats, Inputs: []string{filepath.Join(dir, "history.csv")}})
		if !inputerr.Is(err) || inputerr.OptionOf(err) != "Out" || !strings.Contains(err.Error(), "replaces") {
			t.Errorf("formats %v: %v, want an input error: the run replaces its input", formats, err)
		}
	}
}

// meddle is what the test-user-meddles writer does to the output folder
// while the set is being written, as a user might.
var meddle func()

func init() {
	output.Register("test-user-meddles", output.WriterFunc(func(string, *engine.Result) ([]string, error) {
		meddle()
		return nil, nil
	}))
}

// TestChangesDuringARunStay: files the user creates, replaces or removes
// in the output folder while a run writes its set, and a subfolder made
// meanwhile, are as the user left them after the swap.
func TestChangesDuringARunStay(t *testing.T) {
	res := quickResult(t)
	dir := filepath.Join(t.TempDir(), "plan")
	if _, err := output.Write(dir, res, []string{"parquet"}); err != nil {
		t.Fatal(err)
	}
	for name, text := range map[string]string{"notes.txt": "first draft", "old.txt": "to delete"} {
		if err := os.WriteFile(filepath.Join(dir, name), []byte(text), 0o644); err != nil {
			t.Fatal(err)
		}
	}
	meddle = func() {
		must := func(err error) {
			if err != nil {
				t.Error(err)
			}
		}
		must(os.WriteFile(filepath.Join(dir, "new.txt"), []byte("written during the run"), 0o644))
		// An editor's save: a new file renamed over the old one.
		must(os.WriteFile(filepath.Join(dir, "notes.tmp"), []byte("second draft"), 0o644))
		must(os.Rename(filepath.Join(dir, "notes.tmp"), filepath.Join(dir, "notes.txt")))
		must(os.Remove(filepath.Join(dir, "old.txt")))
		must(os.Mkdir(filepath.Join(dir, "charts"), 0o755))
		must(os.WriteFile(filepath.Join(dir, "charts", "a.svg"), []byte("<svg/>"), 0o644))
	}
	if _, err := output.Write(dir, res, []string{"csv", "test-user-meddles"}); err != nil {
		t.Fatal(err)
	}
	got := snapshotFiles(t, dir)
	want := map[string]string{"new.txt": "written during the run", "notes.txt": "second draft", "charts/a.svg": "<svg/>"}
	for name, text := range want {
		if got[name] != text {
			t.Errorf("%s holds %q, want %q", name, got[name], text)
		}
	}
	if _, ok := got["old.txt"]; ok {
		t.Error("old.txt, removed during the run, is back")
	}
	if _, ok := got["forecasts.csv"]; !ok {
		t.Error("the new set is not in place")
	}
	noStaging(t, dir)
}

// TestFileInTheWayDuringARun: a file the user creates during a run under
// the name of one the run writes cannot stay beside it, so the run is
// refused and the folder keeps its previous set and the user's file.
func TestFileInTheWayDuringARun(t *testing.T) {
	res := quickResult(t)
	dir := filepath.Join(t.TempDir(), "plan")
	if _, err := output.Write(dir, res, []string{"parquet"}); err != nil {
		t.Fatal(err)
	}
	meddle = func() {
		if err := os.WriteFile(filepath.Join(dir, "forecasts.csv"), []byte("mine"), 0o644); err != nil {
			t.Error(err)
		}
	}
	if _, err := output.Write(dir, res, []string{"csv", "test-user-meddles"}); !inputerr.Is(err) || !strings.Contains(err.Error(), "forecasts.csv") {
		t.Fatalf("got %v, want an input error naming forecasts.csv", err)
	}
	got := snapshot(t, dir)
	if got["forecasts.csv"] != "mine" {
		t.Errorf("the user's forecasts.csv holds %q", got["forecasts.csv"])
	}
	checkSums(t, dir, "forecasts.csv")
	noStaging(t, dir)
}

// snapshotFiles maps every file under dir, by slash-separated path, to its
// bytes.
func snapshotFiles(t *testing.T, dir string) map[string]string {
	t.Helper()
	out := map[string]string{}
	err := filepath.WalkDir(dir, func(p string, d os.DirEntry, err error) error {
		if err != nil || d.IsDir() {
			return err
		}
		b, err := os.ReadFile(p)
		rel, _ := filepath.Rel(dir, p)
		out[filepath.ToSlash(rel)] = string(b)
		return err
	})
	if err != nil {
		t.Fatal(err)
	}
	return out
}
