package report

import "testing"

// TestNodeKeyKeepsKeysThatJoinAlike: two nodes whose key columns are equal
// once joined with a NUL byte must find different rows.
func TestNodeKeyKeepsKeysThatJoinAlike(t *testing.T) {
	if nodeKey("region+category", []string{"a\x00b", "c"}) == nodeKey("region+category", []string{"a", "b\x00c"}) ||
		nodeKey("a", []string{"b"}) == nodeKey("a\x00b", nil) {
		t.Error("two nodes share one identity")
	}
}
