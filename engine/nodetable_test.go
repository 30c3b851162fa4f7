package engine

import (
	"os"
	"path/filepath"
	"strings"
	"testing"

	"trueup/hierarchy"
	"trueup/inputerr"
)

// TestLoadTablesRefusesControlCharactersInKeys: a base table whose key
// holds a control character is refused with file, column and row, the key
// shown escaped. Before, "N\x00" passed and became a node of its own.
func TestLoadTablesRefusesControlCharactersInKeys(t *testing.T) {
	path := filepath.Join(t.TempDir(), "base.csv")
	text := "store,period,base\nN01,2024-01,1\nN\x1b[2J,2024-01,2\n,2024-01,3\n"
	if err := os.WriteFile(path, []byte(text), 0o644); err != nil {
		t.Fatal(err)
	}
	_, err := LoadTables(Tables{Base: path, Chains: []hierarchy.Chain{{"store"}}})
	if err == nil || !inputerr.Is(err) {
		t.Fatalf("got %v, want an input error", err)
	}
	for _, want := range []string{path, "row 2", `column "store"`, `"N\x1b[2J"`} {
		if !strings.Contains(err.Error(), want) {
			t.Errorf("%v\ndoes not say %s", err, want)
		}
	}
}
