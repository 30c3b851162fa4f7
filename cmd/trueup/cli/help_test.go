package cli

import (
	"strings"
	"testing"
)

// TestRootHelp checks the root help's own layout: every command listed
// once under a group, and none of the framework's stock wording or
// commands.
func TestRootHelp(t *testing.T) {
	root := newRootCmd()
	var out strings.Builder
	root.SetOut(&out)
	root.SetArgs([]string{"--help"})
	if err := root.Execute(); err != nil {
		t.Fatal(err)
	}
	text := out.String()
	for _, stock := range []string{"Available Commands", "completion", "Help about any command", "for more information about a command"} {
		if strings.Contains(text, stock) {
			t.Errorf("the root help still says %q", stock)
		}
	}
	for _, c := range root.Commands() {
		if c.Hidden || c.Name() == "help" {
			continue
		}
		if n := strings.Count(text, "\n  "+c.Name()+" "); n != 1 {
			t.Errorf("command %s is listed %d times in the root help", c.Name(), n)
		}
	}
}
