package crash

import (
	"errors"
	"strings"
	"testing"
)

// TestGroupRaisesThePanicInTheWaitingGoroutine checks that a panic in a
// group's goroutine reaches the goroutine that waits, with the stack of
// where it happened, and that Catch turns a panic into an error.
func TestGroupRaisesThePanicInTheWaitingGoroutine(t *testing.T) {
	var got any
	func() {
		defer func() { got = recover() }()
		var g Group
		g.Go(func() {})
		g.Go(func() { panic("boom") })
		g.Wait()
	}()
	p, ok := got.(*Panic)
	if !ok || p.Value != "boom" || !strings.Contains(string(p.Stack), "crash_test.go") {
		t.Fatalf("recovered %#v, want a *Panic of \"boom\" with the stack of the test", got)
	}
	err := func() (err error) {
		defer Catch(&err)
		var m map[string]int
		m["x"] = 1 // a nil map: a runtime panic
		return nil
	}()
	var cp *Panic
	if !errors.As(err, &cp) || !strings.Contains(err.Error(), "internal error") {
		t.Fatalf("Catch gave %v", err)
	}
}
