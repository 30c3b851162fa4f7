package cli

import (
	"bytes"
	"os"
	"path/filepath"
	"strings"
	"testing"
)

// TestRenamedFlags checks the new names --hierarchy, --intervals and
// --season-length, and that the old names, alone or mixed with the new
// ones, still give the same files (run.json aside: it records timings)
// and print a deprecation note.
func TestRenamedFlags(t *testing.T) {
	in := smallInput(t)
	common := []string{"forecast", "--input", in, "--family", "drift", "--horizon", "4", "--quiet", "--format", "csv", "--no-report"}
	runWith := func(flags ...string) (string, string) {
		out := filepath.Join(t.TempDir(), "out")
		var code int
		stderr := captureStderr(t, func() { code = run(append(append(append([]string{}, common...), "--out", out), flags...)) })
		if code != 0 {
			t.Fatalf("%v: exit %d: %s", flags, code, stderr)
		}
		return out, stderr
	}
	newDir, newErr := runWith("--hierarchy", "region,store", "--hierarchy", "category", "--intervals", "90", "--season-length", "12")
	if strings.Contains(newErr, "deprecated") {
		t.Errorf("the new names print a deprecation note: %s", newErr)
	}
	oldDir, oldErr := runWith("--hierarchy", "region,store", "--nest", "category", "--levels", "90", "--period", "12")
	for _, old := range []string{"--nest", "--levels", "--period"} {
		if !strings.Contains(oldErr, "Flag "+old+" has been deprecated") {
			t.Errorf("no deprecation note for %s: %s", old, oldErr)
		}
	}
	for _, name := range []string{"forecasts.csv", "models.csv", "history.csv"} {
		a, err := os.ReadFile(filepath.Join(newDir, name))
		if err != nil {
			t.Fatal(err)
		}
		b, err := os.ReadFile(filepath.Join(oldDir, name))
		if err != nil {
			t.Fatal(err)
		}
		if !bytes.Equal(a, b) {
			t.Errorf("%s differs between the new and the old flag names", name)
		}
		if name == "forecasts.csv" && !bytes.Contains(a, []byte("pi90_lower")) {
			t.Errorf("--intervals 90 wrote no pi90_lower column")
		}
	}
	if code := run(append(append([]string{}, common...), "--out", filepath.Join(t.TempDir(), "x"), "--hierarchy", "region", "--season-length", "0")); code != 2 {
		t.Errorf("--season-length 0: exit %d, want 2", code)
	}
}
