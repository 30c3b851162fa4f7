package main

import (
	"bytes"
	"encoding/json"
	"os"
	"os/exec"
	"path/filepath"
	"reflect"
	"testing"
)

// build compiles a program into dir: trueup from the main module with the
// main module's own dependencies (the reference), trueup-beam from this
// module.
func build(t *testing.T, dir, name, moduleDir, pkg string) string {
	t.Helper()
	bin := filepath.Join(dir, name)
	cmd := exec.Command("go", "build", "-o", bin, pkg)
	cmd.Dir = moduleDir
	if out, err := cmd.CombinedOutput(); err != nil {
		t.Fatalf("go build %s: %v\n%s", pkg, err, out)
	}
	return bin
}

// runInto runs bin with args into the folder out and moves the result to
// keep: both programs write to the same folder name, so run.json and the
// report name the same paths.
func runInto(t *testing.T, bin, out, keep string, args ...string) {
	t.Helper()
	cmd := exec.Command(bin, append(args, "--out", out, "--quiet")...)
	var stderr bytes.Buffer
	cmd.Stderr = &stderr
	if err := cmd.Run(); err != nil {
		t.Fatalf("%s %v: %v\n%s", filepath.Base(bin), args, err, stderr.String())
	}
	if err := os.Rename(out, keep); err != nil {
		t.Fatal(err)
	}
}

// sameSets checks that two output folders hold the same files with the
// same bytes; in run.json, everything but timings_seconds (wall-clock
// times of the stages, which differ from run to run).
func sameSets(t *testing.T, want, got string) {
	t.Helper()
	list := func(dir string) []string {
		entries, err := os.ReadDir(dir)
		if err != nil {
			t.Fatal(err)
		}
		var names []string
		for _, e := range entries {
			names = append(names, e.Name())
		}
		return names
	}
	names := list(want)
	if g := list(got); !reflect.DeepEqual(names, g) {
		t.Fatalf("files: local %v, beam %v", names, g)
	}
	for _, name := range names {
		a, err := os.ReadFile(filepath.Join(want, name))
		if err != nil {
			t.Fatal(err)
		}
		b, err := os.ReadFile(filepath.Join(got, name))
		if err != nil {
			t.Fatal(err)
		}
		if name == "run.json" {
			a, b = withoutTimings(t, a), withoutTimings(t, b)
		}
		if !bytes.Equal(a, b) {
			t.Errorf("%s differs between the local and the Beam fit stage", name)
		}
	}
}

func withoutTimings(t *testing.T, b []byte) []byte {
	t.Helper()
	var run map[string]any
	if err := json.Unmarshal(b, &run); err != nil {
		t.Fatal(err)
	}
	if _, ok := run["timings_seconds"]; !ok {
		t.Fatal("run.json has no timings_seconds")
	}
	delete(run, "timings_seconds")
	out, err := json.Marshal(run)
	if err != nil {
		t.Fatal(err)
	}
	return out
}

// TestDemoSameBytes runs the demo (every output format) and a backtest
// with trueup (engine.Local) and with trueup-beam (the fit stage on Beam's prism
// runner, in this process) and checks that every file they write is the
// same bytes. The reference is the local program itself: the Beam path
// must change where nodes are fitted, nothing else.
func TestDemoSameBytes(t *testing.T) {
	if testing.Short() {
		t.Skip("builds both programs and runs them; -short skips it")
	}
	dir := t.TempDir()
	local := build(t, dir, "trueup", "../../../..", "./cmd/trueup")
	beam := build(t, dir, "trueup-beam", ".", ".")
	out := filepath.Join(dir, "out")

	demo := []string{"demo", "--format", "csv,parquet,arrow"}
	runInto(t, local, out, filepath.Join(dir, "demo-local"), demo...)
	runInto(t, beam, out, filepath.Join(dir, "demo-beam"), demo...)
	sameSets(t, filepath.Join(dir, "demo-local"), filepath.Join(dir, "demo-beam"))

	// A backtest on the demo's rows, read back from the file the demo
	// wrote: one pipeline per origin.
	input := filepath.Join(dir, "sales.parquet")
	if err := os.Rename(filepath.Join(dir, "demo-local", "demo_sales.parquet"), input); err != nil {
		t.Fatal(err)
	}
	source := []string{"--input", input, "--time", "period", "--value", "sales",
		"--nest", "region,store", "--nest", "category"}
	args := append([]string{"backtest", "--origins", "2", "--every", "3", "--family", "ets"}, source...)
	runInto(t, local, out, filepath.Join(dir, "backtest-local"), args...)
	runInto(t, beam, out, filepath.Join(dir, "backtest-beam"), args...)
	sameSets(t, filepath.Join(dir, "backtest-local"), filepath.Join(dir, "backtest-beam"))
}
