// Package trueup_test holds checks that concern the module as a whole.
package trueup_test

import (
	"os/exec"
	"strings"
	"testing"
)

// layers lists trueup's packages from the bottom up (see DEVELOPERS.md,
// "Layers"). A package may import packages of its own layer or of a lower
// one, never of a higher one, so data flows top to bottom: a program calls
// the engine, the engine calls reconciliation, models and tables, and
// nothing reaches back up. A pattern ending in "/..." covers a folder and
// everything below it.
var layers = [][]string{
	{"trueup/internal/...", "trueup/inputerr", "trueup/fixtures/reference", "trueup/accuracy"}, // leaves
	{"trueup/tableio"},                     // tables in and out
	{"trueup/hierarchy"},                   // grouped structure
	{"trueup/models", "trueup/models/..."}, // model families
	{"trueup/reconcile"},                   // reconciliation
	{"trueup/fixtures"},                    // demo chain
	{"trueup/engine"},                      // the library API
	{"trueup/engine/output"},               // writers by format
	{"trueup/report"},                      // the HTML report
	{"trueup/cmd/...", "trueup/bench/...", "trueup/fixtures/cmd/..."}, // programs
}

// layerOf returns the layer of a package; the most specific pattern wins.
func layerOf(pkg string) (int, bool) {
	best, bestLen := -1, -1
	for l, patterns := range layers {
		for _, p := range patterns {
			match := pkg == p
			if prefix, ok := strings.CutSuffix(p, "/..."); ok {
				match = pkg == prefix || strings.HasPrefix(pkg, prefix+"/")
			}
			if match && len(p) > bestLen {
				best, bestLen = l, len(p)
			}
		}
	}
	return best, best >= 0
}

// TestImportsRunDownTheLayers checks every non-test import of every
// package in the module against the layer order, and that internal/ holds
// only leaves (packages importing nothing of trueup's).
func TestImportsRunDownTheLayers(t *testing.T) {
	out, err := exec.Command("go", "list", "-f", `{{.ImportPath}} {{join .Imports " "}}`, "./...").Output()
	if err != nil {
		t.Fatalf("go list: %v", err)
	}
	checked := 0
	for _, line := range strings.Split(strings.TrimSpace(string(out)), "\n") {
		fields := strings.Fields(line)
		pkg := fields[0]
		if pkg == "trueup" {
			continue // this test-only package
		}
		from, ok := layerOf(pkg)
		if !ok {
			t.Errorf("package %s is in no layer; add it to the list", pkg)
			continue
		}
		for _, imp := range fields[1:] {
			if imp != "trueup" && !strings.HasPrefix(imp, "trueup/") {
				continue
			}
			checked++
			if strings.HasPrefix(pkg, "trueup/internal/") {
				t.Errorf("%s is in internal/ but imports %s: internal/ holds leaves only", pkg, imp)
			}
			to, ok := layerOf(imp)
			if !ok {
				t.Errorf("package %s is in no layer", imp)
				continue
			}
			if to > from {
				t.Errorf("%s (layer %d) imports %s (layer %d): imports must run down the layers", pkg, from, imp, to)
			}
		}
	}
	if checked == 0 {
		t.Fatal("no imports between trueup packages were checked")
	}
}
