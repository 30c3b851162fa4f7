package glossary

import (
	"os"
	"path/filepath"
	"reflect"
	"testing"
)

func write(t *testing.T, text string) string {
	t.Helper()
	p := filepath.Join(t.TempDir(), "g.md")
	if err := os.WriteFile(p, []byte(text), 0o644); err != nil {
		t.Fatal(err)
	}
	return p
}

// TestCheck checks that placeholders match numbers and text, and that
// names outside the section and entries nobody shows are both reported.
func TestCheck(t *testing.T) {
	g, err := Load(write(t, "# G\n\n## Columns\n\n- `pi{N}_lower`: lower bound\n- `forecast`: the forecast\n- `old`: gone\n\n## Flags\n\n- `--out`: folder\n"))
	if err != nil {
		t.Fatal(err)
	}
	unknown, unused := g.Check("Columns", []string{"pi80_lower", "pi99.5_lower", "forecast", "pix_lower", "--out"})
	if want := []string{"--out", "pix_lower"}; !reflect.DeepEqual(unknown, want) {
		t.Errorf("unknown = %q, want %q", unknown, want)
	}
	if want := []string{"old"}; !reflect.DeepEqual(unused, want) {
		t.Errorf("unused = %q, want %q", unused, want)
	}
}

// TestLoadRejects checks that an entry without a meaning, an entry
// outside a section and a name listed twice are errors.
func TestLoadRejects(t *testing.T) {
	for _, text := range []string{
		"## A\n- `x`:\n",
		"- `x`: before any section\n",
		"## A\n- `x`: one\n- `x`: two\n",
	} {
		if _, err := Load(write(t, text)); err == nil {
			t.Errorf("Load(%q) accepted it", text)
		}
	}
}
