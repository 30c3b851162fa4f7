package hierarchy

import (
	"slices"
	"testing"

	"trueup/inputerr"
)

// rowSet is the set of bottom series node i adds up: the definition of
// the node the navigation methods are checked against.
func rowSet(st *Structure, i int) map[int]bool {
	out := map[int]bool{}
	for _, j := range st.S.Row(i) {
		out[j] = true
	}
	return out
}

func subset(a, b map[int]bool) bool {
	for j := range a {
		if !b[j] {
			return false
		}
	}
	return true
}

// depthDiff reports whether depth a is depth b refined one step in one
// chain, and which chain (−1: a equals b).
func depthDiff(a, b []int) (more int, ok bool) {
	more = -1
	for c := range a {
		switch a[c] - b[c] {
		case 0:
		case 1:
			if more >= 0 {
				return -1, false
			}
			more = c
		default:
			return -1, false
		}
	}
	return more, true
}

// TestNavigationMatchesMembership checks Lookup, NodeAt, Splits and
// Ancestors against the nodes' sets of bottom series (the rows of S,
// themselves checked by hand in TestSummingMatrixByHand).
func TestNavigationMatchesMembership(t *testing.T) {
	st := smallStructure(t)
	for i, n := range st.Nodes {
		if got, ok := st.Lookup(n.Key); !ok || got != i {
			t.Errorf("Lookup(%q) = %d, %v; want %d", n.Key, got, ok, i)
		}
		rows := rowSet(st, i)
		for j := range rows {
			if got := st.NodeAt(n.Level, j); got != i {
				t.Errorf("NodeAt(%s, %d) = %d, want %d", st.Levels[n.Level].Name, j, got, i)
			}
		}
		// Splits: one per chain not at full depth, children one chain
		// step finer, disjoint, adding up to the node.
		depth := st.Levels[n.Level].Depth
		want := 0
		for c, d := range depth {
			if d < len(st.Chains[c]) {
				want++
			}
		}
		splits := st.Splits(i)
		if len(splits) != want {
			t.Errorf("%s: %d splits, want %d", st.Label(i), len(splits), want)
		}
		for s, sp := range splits {
			if s > 0 && splits[s-1].Level >= sp.Level {
				t.Errorf("%s: splits not in level order", st.Label(i))
			}
			if c, ok := depthDiff(st.Levels[sp.Level].Depth, depth); !ok || c != sp.Chain {
				t.Errorf("%s: split along chain %d has children at level %s", st.Label(i), sp.Chain, st.Levels[sp.Level].Name)
			}
			covered := map[int]bool{}
			for _, ch := range sp.Nodes {
				for j := range rowSet(st, ch) {
					if covered[j] {
						t.Errorf("%s: bottom %d under two children", st.Label(i), j)
					}
					covered[j] = true
				}
			}
			if len(covered) != len(rows) || !subset(covered, rows) {
				t.Errorf("%s: children along chain %d cover %v, want %v", st.Label(i), sp.Chain, covered, rows)
			}
		}
		// Ancestors: exactly the nodes of other levels holding all of i.
		var wantAnc []int
		for a := range st.Nodes {
			if st.Nodes[a].Level != n.Level && subset(rows, rowSet(st, a)) {
				if keepsAtLeast(depth, st.Levels[st.Nodes[a].Level].Depth) {
					wantAnc = append(wantAnc, a)
				}
			}
		}
		if got := st.Ancestors(i); !slices.Equal(got, wantAnc) {
			t.Errorf("Ancestors(%s) = %v, want %v", st.Label(i), got, wantAnc)
		}
	}
	if _, ok := st.Lookup([]string{"north", "", "toys", "x"}); ok {
		t.Error("Lookup accepted a key of the wrong length")
	}
	if _, ok := st.Lookup([]string{"", "N1", ""}); ok {
		t.Error("Lookup found a store without its region")
	}
}

// keepsAtLeast reports whether depth fine keeps at least what coarse
// keeps in every chain.
func keepsAtLeast(fine, coarse []int) bool {
	for c := range fine {
		if coarse[c] > fine[c] {
			return false
		}
	}
	return true
}

func TestSubMapsToTheSameNodes(t *testing.T) {
	st := smallStructure(t)
	// Without store N2 (bottom series 2 and 3).
	sub, toFull, err := st.Sub([]bool{true, true, false, false, true, true})
	if err != nil {
		t.Fatal(err)
	}
	if len(sub.Nodes) != len(toFull) || sub.NumBottom() != 4 {
		t.Fatalf("sub has %d nodes, %d bottom; %d mapped", len(sub.Nodes), sub.NumBottom(), len(toFull))
	}
	for i, f := range toFull {
		if !slices.Equal(sub.Nodes[i].Key, st.Nodes[f].Key) || sub.Levels[sub.Nodes[i].Level].Name != st.Levels[st.Nodes[f].Level].Name {
			t.Errorf("sub node %s maps to %s", sub.Label(i), st.Label(f))
		}
	}
	same, id, err := st.Sub([]bool{true, true, true, true, true, true})
	if err != nil || same != st || len(id) != len(st.Nodes) || id[7] != 7 {
		t.Errorf("keeping everything: %p %v %v, want the structure itself", same, id, err)
	}
}

// TestKeysThatJoinAlikeStayApart builds two bottom series whose keys are
// equal once joined with a NUL byte, {"a\x00b", "c"} and {"a", "b\x00c"}:
// they must stay two nodes with their own numbers.
func TestKeysThatJoinAlikeStayApart(t *testing.T) {
	chains, _ := ParseNest([]string{"region", "store"})
	keys := [][]string{{"a\x00b", "c"}, {"a", "b\x00c"}}
	st, err := Build(chains, keys)
	if err != nil {
		t.Fatal(err)
	}
	if st.NumBottom() != 2 || len(st.Levels[len(st.Levels)-1].Nodes) != 2 {
		t.Fatalf("%d bottom series, %d bottom nodes; want 2 and 2", st.NumBottom(), len(st.Levels[len(st.Levels)-1].Nodes))
	}
	j0, ok0 := st.BottomIndex(keys[0])
	j1, ok1 := st.BottomIndex(keys[1])
	if !ok0 || !ok1 || j0 == j1 {
		t.Fatalf("BottomIndex gives %d, %v and %d, %v", j0, ok0, j1, ok1)
	}
	b := make([]float64, 2)
	b[j0], b[j1] = 1, 10
	y := st.S.MulVec(nil, b)
	for i, n := range st.Nodes {
		want := 0.0
		for k, key := range keys {
			in := true
			for a, v := range n.Key {
				in = in && (v == "" || v == key[a])
			}
			if in {
				want += []float64{1, 10}[k]
			}
		}
		if y[i] != want {
			t.Errorf("%s: %g, want %g", st.Label(i), y[i], want)
		}
	}
	if KeyID("a\x00b", "c") == KeyID("a", "b\x00c") || KeyID("ab", "") == KeyID("a", "b") {
		t.Error("KeyID gives two lists one identity")
	}
}

func TestEmptyBottomValueIsRefused(t *testing.T) {
	chains, _ := ParseNest([]string{"region", "store"})
	if _, err := Build(chains, [][]string{{"north", ""}}); err == nil || !inputerr.Is(err) {
		t.Errorf("a bottom key with an empty store: %v, want an input error", err)
	}
}

// TestKeyLabel: a node's one name lists the values it keeps with their
// attributes, in attribute order, and the grand total is "total".
func TestKeyLabel(t *testing.T) {
	attrs := []string{"region", "store", "category"}
	for _, c := range []struct {
		key  []string
		want string
	}{
		{[]string{"North", "N01", "toys"}, "region=North store=N01 category=toys"},
		{[]string{"North", "", "toys"}, "region=North category=toys"},
		{[]string{"", "", "toys"}, "category=toys"},
		{[]string{"", "", ""}, "total"},
	} {
		if got := KeyLabel(attrs, c.key); got != c.want {
			t.Errorf("KeyLabel(%q) = %q, want %q", c.key, got, c.want)
		}
	}
}
