package cli

import (
	"path/filepath"
	"strconv"
	"testing"
)

// TestEveryFileSameBytesAcrossRunsAndWorkers runs the same forecast six
// times with 1, 2 and 3 workers, in all three table formats with the
// report, and requires every file of every run to be byte-identical to the
// first run's; run.json is compared without its timings, the one field
// that differs from run to run by nature. The default (automatic) model
// choice is used, as its search is where worker order could show.
func TestEveryFileSameBytesAcrossRunsAndWorkers(t *testing.T) {
	input := smallInput(t)
	var first map[string]string
	for i, workers := range []int{1, 2, 3, 1, 2, 3} {
		out := filepath.Join(t.TempDir(), "run")
		args := forecastArgs(input, out, 6, "parquet,csv,arrow")
		args = append(withoutFamily(args), "--workers", strconv.Itoa(workers))
		if _, err := runCapture(args...); err != nil {
			t.Fatal(err)
		}
		files := readFolder(t, out)
		files["run.json"] = withoutTimings(t, files["run.json"])
		if i == 0 {
			first = files
			if len(first) != 14 {
				t.Fatalf("the first run wrote %d files, want 14", len(first))
			}
			continue
		}
		if len(files) != len(first) {
			t.Errorf("run %d wrote %d files, the first %d", i+1, len(files), len(first))
		}
		for name, b := range first {
			if files[name] != b {
				t.Errorf("run %d (%d workers): %s differs from the first run's", i+1, workers, name)
			}
		}
	}
}

// withoutFamily drops "--family X" from args, for the default model choice.
func withoutFamily(args []string) []string {
	var out []string
	for i := 0; i < len(args); i++ {
		if args[i] == "--family" {
			i++
			continue
		}
		out = append(out, args[i])
	}
	return out
}
