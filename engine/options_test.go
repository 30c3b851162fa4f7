package engine

import (
	"strings"
	"testing"

	"trueup/inputerr"
)

// TestOptionsBeyondTheHistory checks the bounds a history of 72 monthly
// periods puts on an explicit period and horizon (two seasonal cycles, a
// horizon no longer than the history: common practice), and that the
// message says what the history supports.
func TestOptionsBeyondTheHistory(t *testing.T) {
	for _, c := range []struct {
		opt    Options
		option string // "" when accepted
		say    string
	}{
		{Options{}, "", ""},
		{Options{Period: 36, Horizon: 72}, "", ""},
		{Options{Period: 37}, "Period", "at most 36"},
		{Options{Period: 1000}, "Period", "at most 36"},
		{Options{Horizon: 73}, "Horizon", "at most 72"},
		{Options{Horizon: 10000}, "Horizon", "at most 72"},
	} {
		err := c.opt.Supported(72, 12)
		if c.option == "" {
			if err != nil {
				t.Errorf("%+v: %v", c.opt, err)
			}
			continue
		}
		if !inputerr.Is(err) || inputerr.OptionOf(err) != c.option || !strings.Contains(err.Error(), c.say) {
			t.Errorf("period %d horizon %d: got %v, want an input error about %s saying %q", c.opt.Period, c.opt.Horizon, err, c.option, c.say)
		}
	}
	// A short history keeps the default horizon of its grain (one cycle).
	if err := (Options{Horizon: 12}).Supported(10, 12); err != nil {
		t.Errorf("the default horizon refused on a short history: %v", err)
	}
}
