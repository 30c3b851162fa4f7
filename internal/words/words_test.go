package words

import "testing"

// TestCount checks singular and plural and the thousands separators
// (common practice in English-language reports).
func TestCount(t *testing.T) {
	for _, c := range []struct {
		n    int
		want string
	}{{0, "0 nodes"}, {1, "1 node"}, {2, "2 nodes"}, {3857, "3,857 nodes"}, {1234567, "1,234,567 nodes"}, {-1200, "-1,200 nodes"}} {
		if got := Count(c.n, "node", "nodes"); got != c.want {
			t.Errorf("Count(%d) = %q, want %q", c.n, got, c.want)
		}
	}
	if Agree(1, "has", "have") != "has" || Agree(3, "has", "have") != "have" {
		t.Error("Agree")
	}
}
