package membudget

import (
	"errors"
	"math"
	"runtime/debug"
	"strings"
	"testing"
)

// TestParseFormatAndSaturation checks sizes against the SI (kB = 1000 B)
// and IEC 80000-13 (KiB = 1024 B) prefixes, the refusal of what is not a
// size, and that products and sums saturate instead of overflowing.
func TestParseFormatAndSaturation(t *testing.T) {
	for in, want := range map[string]int64{"512MB": 512e6, "16 GB": 16e9, "2GiB": 2 << 30, "1.5KiB": 1536, "1000": 1000, "64mb": 64e6} {
		if got, err := Parse(in); err != nil || got != want {
			t.Errorf("Parse(%q) = %d, %v; want %d", in, got, err, want)
		}
	}
	for _, bad := range []string{"", "lots", "-1GB", "0", "1e30TB"} {
		if _, err := Parse(bad); err == nil {
			t.Errorf("Parse(%q): no error", bad)
		}
	}
	if got := Format(34_712_963_072); got != "34.7 GB" {
		t.Errorf("Format = %q", got)
	}
	if Mul(1<<40, 1<<40) != math.MaxInt64 || Add(math.MaxInt64, 1) != math.MaxInt64 || Mul(3, 0) != 0 {
		t.Error("Mul or Add overflowed")
	}
	err := Check(1000, "a table", 2000)
	var e *Error
	if !errors.As(err, &e) || !strings.Contains(err.Error(), "a table would need at least 2.0 KB") || Check(0, "x", 1<<62) != nil {
		t.Errorf("Check: %v", err)
	}
	t.Setenv(Env, "3GB")
	if b, err := Budget(); err != nil || b != 3e9 {
		t.Errorf("Budget with %s=3GB: %d, %v", Env, b, err)
	}
}

// TestLimitRuntime: the budget becomes the runtime's soft memory limit,
// unless GOMEMLIMIT sets one or TRUEUP_MEMORY is not a size.
func TestLimitRuntime(t *testing.T) {
	before := debug.SetMemoryLimit(-1)
	t.Cleanup(func() { debug.SetMemoryLimit(before) })
	t.Setenv(Env, "3GiB")
	if got := LimitRuntime(); got != 3<<30 || debug.SetMemoryLimit(-1) != 3<<30 {
		t.Fatalf("set %d, runtime limit %d, want %d", got, debug.SetMemoryLimit(-1), 3<<30)
	}
	debug.SetMemoryLimit(before)
	t.Setenv(Env, "lots")
	if got := LimitRuntime(); got != 0 || debug.SetMemoryLimit(-1) != before {
		t.Fatalf("a bad %s set %d, runtime limit %d", Env, got, debug.SetMemoryLimit(-1))
	}
	t.Setenv(Env, "3GiB")
	t.Setenv("GOMEMLIMIT", "5GiB")
	if got := LimitRuntime(); got != 0 || debug.SetMemoryLimit(-1) != before {
		t.Fatalf("with GOMEMLIMIT set %d, runtime limit %d", got, debug.SetMemoryLimit(-1))
	}
}
