package cli

import (
	"encoding/json"
	"os"
	"path/filepath"
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
	args := []string{"backtest", "--input", in, "--nest", "region,store", "--nest", "category", "--family", "drift",
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
	args := []string{"forecast", "--input", in, "--nest", "region,store", "--nest", "category", "--family", "drift",
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
	if code := run([]string{"forecast", "--input", in, "--nest", "region,store", "--nest", "category", "--origins", "2",
		"--out", filepath.Join(t.TempDir(), "x"), "--quiet"}); code != 2 {
		t.Errorf("--origins without --method auto: exit %d, want 2", code)
	}
}
