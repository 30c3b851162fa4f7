package engine

import "testing"

// TestAttrOfUndoesKeyColumn: the attribute read from a result table's key
// column is the one KeyColumn wrote it for, whether or not it took the
// prefix, and a user's own column that merely starts with it keeps it.
func TestAttrOfUndoesKeyColumn(t *testing.T) {
	for _, attr := range []string{"store", "origin", "level", "pi80_lower", "key_store", "key_"} {
		if got := AttrOf(KeyColumn(attr)); got != attr {
			t.Errorf("AttrOf(KeyColumn(%q)) = %q (column %q)", attr, got, KeyColumn(attr))
		}
	}
}
