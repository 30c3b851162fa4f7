package cli

import (
	"encoding/json"
	"os"
	"path/filepath"
	"strings"
	"testing"

	"trueup/fixtures"
)

// smallInput writes a small invented chain (4 years, monthly) and returns
// its path.
func smallInput(t *testing.T) string {
	t.Helper()
	path := filepath.Join(t.TempDir(), "small.parquet")
	if err := fixtures.WriteSmall(path, 4); err != nil {
		t.Fatal(err)
	}
	return path
}

func TestBacktestCommand(t *testing.T) {
	in := smallInput(t)
	args := []string{"backtest", "--input", in, "--hierarchy", "region,store", "--hierarchy", "category", "--family", "drift",
		"--horizon", "4", "--quiet"}
	out := filepath.Join(t.TempDir(), "bt")
	if code := run(append(args, "--origins", "2", "--out", out, "--format", "csv")); code != 0 {
		t.Fatalf("backtest exited %d", code)
	}
	for _, name := range []string{"backtest.csv", "scores.csv", "contributions.csv", "drivers.csv", "node_scores.csv", "incoherence.csv", "run.json"} {
		if _, err := os.Stat(filepath.Join(out, name)); err != nil {
			t.Error(err)
		}
	}
	// Bad input: exit status 2 and no files.
	for _, bad := range [][]string{
		{"--origins", "0"},
		{"--origins", "40"}, // 48 months cannot hold 40 origins, 4 steps and 24 months to fit
		{"--every", "0"},
		{"--compare", "sideways"},
		{"--compare", "top-down-fcst"}, // the only method cannot run on crossed chains
	} {
		dir := filepath.Join(t.TempDir(), "bad")
		if code := run(append(append(args, "--out", dir), bad...)); code != 2 {
			t.Errorf("%v: exit %d, want 2", bad, code)
		}
		if _, err := os.Stat(dir); err == nil {
			t.Errorf("%v: wrote %s", bad, dir)
		}
	}
}

func TestForecastMethodAuto(t *testing.T) {
	in := smallInput(t)
	out := t.TempDir()
	args := []string{"forecast", "--input", in, "--hierarchy", "region,store", "--hierarchy", "category", "--family", "drift",
		"--horizon", "4", "--quiet", "--method", "auto", "--origins", "2", "--out", out}
	if code := run(args); code != 0 {
		t.Fatalf("forecast --method auto exited %d", code)
	}
	var rep struct {
		Reconcile struct {
			Method string
			Auto   *struct {
				Method, Reason string
				Origins        int
			} `json:"automatic_choice"`
		}
	}
	data, err := os.ReadFile(filepath.Join(out, "run.json"))
	if err != nil {
		t.Fatal(err)
	}
	if err := json.Unmarshal(data, &rep); err != nil {
		t.Fatal(err)
	}
	if a := rep.Reconcile.Auto; a == nil || a.Method == "" || a.Reason == "" || a.Origins != 2 {
		t.Errorf("run.json automatic_choice %+v", a)
	}
	if code := run([]string{"forecast", "--input", in, "--hierarchy", "region,store", "--hierarchy", "category", "--origins", "2",
		"--out", filepath.Join(t.TempDir(), "x"), "--quiet"}); code != 2 {
		t.Errorf("--origins without --method auto: exit %d, want 2", code)
	}
}

// TestForecastCalibrate: --calibrate records the backtest's check in
// run.json; fewer than two origins, or more than the history holds, exit
// 2 and write nothing.
func TestForecastCalibrate(t *testing.T) {
	in := smallInput(t)
	args := []string{"forecast", "--input", in, "--hierarchy", "region,store", "--hierarchy", "category", "--family", "drift",
		"--horizon", "4", "--quiet", "--method", "bottom-up"}
	out := t.TempDir()
	if code := run(append(args, "--calibrate", "3", "--out", out)); code != 0 {
		t.Fatalf("forecast --calibrate exited %d", code)
	}
	var rep struct {
		Reconcile struct {
			Calibration *struct {
				Origins int
				Applied bool
				Check   struct{ Method string }
			} `json:"interval_calibration"`
		}
	}
	data, err := os.ReadFile(filepath.Join(out, "run.json"))
	if err != nil {
		t.Fatal(err)
	}
	if err := json.Unmarshal(data, &rep); err != nil {
		t.Fatal(err)
	}
	if c := rep.Reconcile.Calibration; c == nil || c.Origins != 3 || c.Check.Method != "bottom-up" {
		t.Errorf("run.json calibration %+v", c)
	}
	for _, bad := range []string{"1", "-2", "40"} {
		dir := filepath.Join(t.TempDir(), "bad")
		if code := run(append(args, "--calibrate", bad, "--out", dir)); code != 2 {
			t.Errorf("--calibrate %s: exit %d, want 2", bad, code)
		}
		if _, err := os.Stat(dir); err == nil {
			t.Errorf("--calibrate %s: wrote %s", bad, dir)
		}
	}
}

// TestBacktestSummaryWording checks that the backtest's summary names
// its scores in full and explains them: no "Headline", "cover" or
// "int. score" without a word of what they mean.
func TestBacktestSummaryWording(t *testing.T) {
	in := smallInput(t)
	dir := filepath.Join(t.TempDir(), "bt")
	out := runOK(t, "backtest", "--input", in, "--hierarchy", "region,store", "--hierarchy", "category", "--family", "drift",
		"--horizon", "4", "--quiet", "--origins", "2", "--no-report", "--format", "csv", "--out", dir)
	// The scores over all steps are marked as in the scores table: a null
	// step, not 0.
	var rep struct {
		LevelScores []map[string]any `json:"level_scores"`
	}
	if err := json.Unmarshal([]byte(readFile(t, filepath.Join(dir, "run.json"))), &rep); err != nil {
		t.Fatal(err)
	}
	if len(rep.LevelScores) == 0 {
		t.Fatal("run.json has no level scores")
	}
	for _, s := range rep.LevelScores {
		if step, ok := s["step"]; !ok || step != nil {
			t.Errorf("a level score over all steps has step %v, want null", step)
			break
		}
	}
	for _, gone := range []string{"Headline", "cover 80%", "int. score"} {
		if strings.Contains(out, gone) {
			t.Errorf("the summary still says %q", gone)
		}
	}
	for _, want := range []string{"Scores by method (mean over levels, each level weighing the same)", "coverage 80%", "interval score 80%", "energy score",
		"Coverage is the share of actuals inside the interval"} {
		if !strings.Contains(out, want) {
			t.Errorf("the summary lacks %q:\n%s", want, out)
		}
	}
}
