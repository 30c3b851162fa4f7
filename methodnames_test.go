package trueup_test

import (
	"go/scanner"
	"go/token"
	"os"
	"path/filepath"
	"regexp"
	"strconv"
	"strings"
	"testing"

	"trueup/engine"
	"trueup/reconcile"
)

// methodLike finds words that look like a reconciliation method's name or
// label (reconcile.Label) in code and help text.
var methodLike = regexp.MustCompile(`\b(mint|bottom-up|top-down-[a-z]+|middle-out)(-[a-z]+|@[A-Za-z+]+)?`)

// literalNamesAllowed are the only string literals outside reconcile that
// name methods, each allowed once: the defaults.
func literalNamesAllowed() map[string]map[string]int {
	compare := map[string]int{}
	for _, m := range engine.DefaultCompare {
		compare[m]++
	}
	return map[string]map[string]int{
		"engine/pipeline.go": {engine.DefaultMethod: 1},
		"engine/backtest.go": compare,
	}
}

// validName reports whether s is a name or label of reconcile.Methods, or
// one of the placeholders help text uses (mint-COV, middle-out@LEVEL).
func validName(s string) bool {
	name, cov, at, ok := reconcile.ParseLabel(s)
	if !ok {
		return false
	}
	if cov == "" || cov == "COV" {
		return true
	}
	for _, c := range reconcile.CovNames() {
		if c == cov {
			return true
		}
	}
	return at != "" && name != ""
}

// TestMethodNamesComeFromTheTable: the CLI, the engine and the report name
// reconciliation methods only as reconcile.Methods spells them, and list
// or explain them only from that table. A misspelt name in any text
// fails, and so does a name written as a string literal outside the
// defaults (a list or table of methods kept somewhere else).
func TestMethodNamesComeFromTheTable(t *testing.T) {
	var files []string
	for _, dir := range []string{"cmd", "engine", "report"} {
		err := filepath.WalkDir(dir, func(path string, d os.DirEntry, err error) error {
			if err != nil {
				return err
			}
			if !d.IsDir() && (strings.HasSuffix(path, ".go") && !strings.HasSuffix(path, "_test.go") || strings.HasSuffix(path, ".js") && !strings.Contains(path, "uplot")) {
				files = append(files, path)
			}
			return nil
		})
		if err != nil {
			t.Fatal(err)
		}
	}
	literals := 0
	allowed := literalNamesAllowed()
	for _, path := range files {
		src, err := os.ReadFile(path)
		if err != nil {
			t.Fatal(err)
		}
		for _, w := range methodLike.FindAllString(string(src), -1) {
			if !validName(w) {
				t.Errorf("%s: %q is not a method of reconcile.Methods (nor a label of one)", path, w)
			}
		}
		for _, lit := range stringLiterals(t, path, src) {
			if _, _, _, ok := reconcile.ParseLabel(lit); ok && validName(lit) {
				literals++
				if left := allowed[filepath.ToSlash(path)]; left[lit] > 0 {
					left[lit]--
				} else {
					t.Errorf("%s: method %q written as a literal; read it from reconcile.Methods", path, lit)
				}
			}
		}
	}
	for _, m := range append([]string{engine.DefaultMethod}, engine.DefaultCompare...) {
		if m != engine.BaseMethod && !validName(m) {
			t.Errorf("default method %q is not in reconcile.Methods", m)
		}
	}
	if len(files) == 0 || literals == 0 {
		t.Fatalf("scanned %d files and found %d literal names: the check looks at nothing", len(files), literals)
	}
}

// stringLiterals returns the double-quoted string literals of a Go or
// JavaScript file (comments left out in Go).
func stringLiterals(t *testing.T, path string, src []byte) []string {
	var out []string
	if !strings.HasSuffix(path, ".go") {
		for _, m := range regexp.MustCompile(`"((?:[^"\\\n]|\\.)*)"`).FindAllStringSubmatch(string(src), -1) {
			out = append(out, m[1])
		}
		return out
	}
	fs := token.NewFileSet()
	var s scanner.Scanner
	s.Init(fs.AddFile(path, -1, len(src)), src, nil, 0)
	for {
		_, tok, lit := s.Scan()
		if tok == token.EOF {
			return out
		}
		if tok == token.STRING && strings.HasPrefix(lit, `"`) {
			v, err := strconv.Unquote(lit)
			if err != nil {
				t.Fatalf("%s: %v", path, err)
			}
			out = append(out, v)
		}
	}
}
