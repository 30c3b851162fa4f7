package cli

import "testing"

func TestShownKeyAndEscapeUnprintable(t *testing.T) {
	for in, want := range map[string]string{
		"Mill Lane":      "Mill Lane",
		"Café Nord":      "Café Nord",
		"Mill\u202eLane": `"Mill\u202eLane"`,
		"Mill\u00a0Lane": `"Mill\u00a0Lane"`,
		"Caf\xe9":        `"Caf\xe9"`,
	} {
		if got := shownKey(in); got != want {
			t.Errorf("shownKey(%q) = %s, want %s", in, got, want)
		}
	}
	in := "store Mill\u202eLane has\nno rows \x1b[2J \xff"
	want := `store Mill\u202eLane has` + "\n" + `no rows \x1b[2J \xff`
	if got := escapeUnprintable(in); got != want {
		t.Errorf("escapeUnprintable = %q, want %q", got, want)
	}
}
