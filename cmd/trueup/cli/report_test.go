package cli

import (
	"bytes"
	"os"
	"path/filepath"
	"testing"
)

// TestReportCommand checks --no-report, that trueup report --from renders
// the report of an earlier run's folder (the same bytes forecast wrote),
// and its errors: exit status 2 for a folder that is not a run's.
func TestReportCommand(t *testing.T) {
	out := t.TempDir()
	if code := run([]string{"demo", "--quiet", "--family", "drift", "--out", out, "--no-report"}); code != 0 {
		t.Fatalf("demo exited %d", code)
	}
	if _, err := os.Stat(filepath.Join(out, "report.html")); !os.IsNotExist(err) {
		t.Fatalf("--no-report still wrote report.html (%v)", err)
	}
	if code := run([]string{"demo", "--quiet", "--family", "drift", "--out", out}); code != 0 {
		t.Fatalf("demo exited %d", code)
	}
	written, err := os.ReadFile(filepath.Join(out, "report.html"))
	if err != nil {
		t.Fatal(err)
	}
	again := t.TempDir()
	if code := run([]string{"report", "--from", out, "--out", again}); code != 0 {
		t.Fatalf("report exited %d", code)
	}
	rendered, err := os.ReadFile(filepath.Join(again, "report.html"))
	if err != nil {
		t.Fatal(err)
	}
	if !bytes.Equal(written, rendered) {
		t.Error("the report rendered from the folder differs from the one the run wrote")
	}
	if code := run([]string{"report", "--from", t.TempDir()}); code != exitInput {
		t.Errorf("report on an empty folder exited %d, want %d", code, exitInput)
	}
	if code := run([]string{"report"}); code != exitInput {
		t.Errorf("report without --from exited %d, want %d", code, exitInput)
	}
}
