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
		err := output.Check(dir)
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
		if err := output.Check(dir); err != nil {
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
		if err := output.Check(out); !inputerr.Is(err) || !strings.Contains(err.Error(), "current folder") {
			t.Errorf("Check(%s) = %v, want an input error about the current folder", out, err)
		}
	}
	if err := output.Check("plan"); err != nil {
		t.Errorf("a new subfolder of the current one: %v", err)
	}
	if _, err := output.Write("plan", quickResult(t), []string{"csv"}); err != nil {
		t.Fatal(err)
	}
	checkSums(t, filepath.Join(dir, "plan"))
}
