package hierarchy

import (
	"encoding/binary"
	"sort"
	"strings"
)

// Navigation: finding a node by its key, the node of a level that holds a
// bottom series, a node's children along each chain, its ancestors, and
// the structure of a subset of the bottom series. Every package that
// walks the structure uses these; none rebuilds them from the keys.
//
// Node identity. Each attribute's values are numbered (code 0 is "", the
// aggregated value; the others in the order of the values), and a node is
// identified by the fixed-width list of its codes, four bytes per
// attribute. Two different keys therefore always have different
// identities, whatever bytes the values hold: an identity made by joining
// the values with a separator would make {"a\x00b", "c"} and
// {"a", "b\x00c"} one node.

// navigation holds what the navigation methods need; Build fills it.
type navigation struct {
	dict   []map[string]int32 // per attribute: value → code ("" is 0)
	index  map[string]int     // packed codes of a node's key → node
	nodeAt [][]int32          // per level, per bottom series: the node holding it
	splits [][]chainSplit     // per level, per chain
}

// chainSplit lists the children of every node of one level along one
// chain, in compressed rows: the children of the level's k-th node are
// kids[ptr[k]:ptr[k+1]]. level is the children's level, −1 when the level
// keeps the chain at full depth.
type chainSplit struct {
	level int
	ptr   []int
	kids  []int
}

// interner numbers the values of each attribute.
type interner struct {
	values [][]string
	dict   []map[string]int32
}

// newInterner numbers the values of each attribute of the bottom keys in
// sorted order, from 1; 0 is the aggregated value "".
func newInterner(attrs []string, bottom [][]string) *interner {
	in := &interner{values: make([][]string, len(attrs)), dict: make([]map[string]int32, len(attrs))}
	for a := range attrs {
		seen := map[string]bool{}
		var vals []string
		for _, key := range bottom {
			if v := key[a]; !seen[v] {
				seen[v] = true
				vals = append(vals, v)
			}
		}
		sort.Strings(vals)
		in.values[a] = append([]string{""}, vals...)
		in.dict[a] = make(map[string]int32, len(in.values[a]))
		for c, v := range in.values[a] {
			in.dict[a][v] = int32(c)
		}
	}
	return in
}

// codes returns the codes of a key whose values are all known.
func (in *interner) codes(key []string) []int32 {
	out := make([]int32, len(key))
	for a, v := range key {
		out[a] = in.dict[a][v]
	}
	return out
}

// key returns the values of codes.
func (in *interner) key(codes []int32) []string {
	out := make([]string, len(codes))
	for a, c := range codes {
		out[a] = in.values[a][c]
	}
	return out
}

// packCodes writes codes into buf, four bytes each, and returns it.
func packCodes(buf []byte, codes []int32) []byte {
	for a, c := range codes {
		binary.LittleEndian.PutUint32(buf[4*a:], uint32(c))
	}
	return buf[:4*len(codes)]
}

// Lookup returns the node with the given key: one value per attribute of
// Attrs, "" where the node adds that attribute up.
func (s *Structure) Lookup(key []string) (int, bool) {
	if len(key) != len(s.Attrs) {
		return -1, false
	}
	var small [64]byte // no allocation for up to 16 attributes
	buf := small[:0]
	if 4*len(key) > len(small) {
		buf = make([]byte, 4*len(key))
	}
	buf = buf[:4*len(key)]
	for a, v := range key {
		c, ok := s.nav.dict[a][v]
		if !ok {
			return -1, false
		}
		binary.LittleEndian.PutUint32(buf[4*a:], uint32(c))
	}
	i, ok := s.nav.index[string(buf)]
	if !ok {
		return -1, false
	}
	return i, true
}

// NodeAt returns the node of level l that adds up bottom series j
// (0..m−1).
func (s *Structure) NodeAt(l, j int) int { return int(s.nav.nodeAt[l][j]) }

// LevelWithDepth returns the level that keeps depth[c] attributes of
// each chain c.
func (s *Structure) LevelWithDepth(depth []int) (int, bool) {
	for i, lv := range s.Levels {
		same := len(depth) == len(lv.Depth)
		for c := 0; same && c < len(depth); c++ {
			same = lv.Depth[c] == depth[c]
		}
		if same {
			return i, true
		}
	}
	return -1, false
}

// Split is one way a node divides: its children along one chain.
type Split struct {
	Chain int   // the chain refined one step
	Level int   // the children's level
	Nodes []int // the children, ascending; must not be modified
}

// Splits returns the ways node i divides, one per chain that its level
// does not keep at full depth, ordered by the children's level. The
// children of each split add up to node i. A bottom node has none.
func (s *Structure) Splits(i int) []Split {
	l := s.Nodes[i].Level
	k := i - s.Levels[l].Nodes[0]
	var out []Split
	for c, sp := range s.nav.splits[l] {
		if sp.level >= 0 {
			out = append(out, Split{Chain: c, Level: sp.level, Nodes: sp.kids[sp.ptr[k]:sp.ptr[k+1]]})
		}
	}
	sort.Slice(out, func(a, b int) bool { return out[a].Level < out[b].Level })
	return out
}

// Ancestors returns every node that adds node i up further (every
// coarser truncation of its key, the total included), in level order.
func (s *Structure) Ancestors(i int) []int {
	depth := s.Levels[s.Nodes[i].Level].Depth
	j := s.S.Row(i)[0]
	var out []int
	for l, lv := range s.Levels {
		below, same := true, true
		for c := range depth {
			below = below && lv.Depth[c] <= depth[c]
			same = same && lv.Depth[c] == depth[c]
		}
		if below && !same {
			out = append(out, s.NodeAt(l, j))
		}
	}
	return out
}

// Sub builds the structure of the bottom series whose keep entry is true,
// by Build's rules, and returns for each of its nodes the index of the
// same node in s. With every series kept it returns s itself.
func (s *Structure) Sub(keep []bool) (*Structure, []int, error) {
	off := s.BottomOffset()
	var keys [][]string
	for j, k := range keep {
		if k {
			keys = append(keys, s.Nodes[off+j].Key)
		}
	}
	if len(keys) == len(keep) {
		id := make([]int, len(s.Nodes))
		for i := range id {
			id[i] = i
		}
		return s, id, nil
	}
	sub, err := Build(s.Chains, keys)
	if err != nil {
		return nil, nil, err
	}
	return sub, sub.IndexIn(s), nil
}

// IndexIn returns, for each node of s, the index of the same node in
// whole, a structure over the same chains whose bottom series include
// those of s (a sub-structure, or an origin's structure within the whole
// history's). A node of s missing from whole is a programmer error.
func (s *Structure) IndexIn(whole *Structure) []int {
	id := make([]int, len(s.Nodes))
	for i, n := range s.Nodes {
		f, ok := whole.Lookup(n.Key)
		if !ok {
			panic("hierarchy: a node is missing from the structure it lies within")
		}
		id[i] = f
	}
	return id
}

// newSplits finds the children of every node along every chain: the
// parent of a child is the node of the parent level that holds the
// child's first bottom series.
func newSplits(st *Structure) [][]chainSplit {
	out := make([][]chainSplit, len(st.Levels))
	for l, lv := range st.Levels {
		out[l] = make([]chainSplit, len(st.Chains))
		first := lv.Nodes[0]
		for c, d := range lv.Depth {
			if d == len(st.Chains[c]) {
				out[l][c] = chainSplit{level: -1}
				continue
			}
			dd := append([]int(nil), lv.Depth...)
			dd[c]++
			cl, _ := st.LevelWithDepth(dd)
			children := st.Levels[cl].Nodes
			sp := chainSplit{level: cl, ptr: make([]int, len(lv.Nodes)+1), kids: make([]int, len(children))}
			parent := make([]int, len(children))
			for q, ch := range children {
				parent[q] = st.NodeAt(l, st.S.Row(ch)[0]) - first
				sp.ptr[parent[q]+1]++
			}
			for k := range lv.Nodes {
				sp.ptr[k+1] += sp.ptr[k]
			}
			fill := append([]int(nil), sp.ptr[:len(lv.Nodes)]...)
			for q, ch := range children {
				sp.kids[fill[parent[q]]] = ch
				fill[parent[q]]++
			}
			out[l][c] = sp
		}
	}
	return out
}

// Label is node i's one display form, such as "region=North store=N01"
// (KeyLabel of its key): every command, table, JSON document and the
// report name a node so.
func (s *Structure) Label(i int) string { return KeyLabel(s.Attrs, s.Nodes[i].Key) }

// KeyLabel is the display form of the node whose key holds values for
// attrs ("" where the node adds an attribute up): "attr=value" for each
// value given, in the order of attrs, separated by spaces; "total" when
// the key adds every attribute up. Code that names a node from a table's
// key columns rather than from a Structure (fit's series, the report)
// uses it, so that a node has one name everywhere.
func KeyLabel(attrs, key []string) string {
	var b strings.Builder
	for a, v := range key {
		if v == "" {
			continue
		}
		if b.Len() > 0 {
			b.WriteByte(' ')
		}
		b.WriteString(attrs[a] + "=" + v)
	}
	if b.Len() == 0 {
		return "total"
	}
	return b.String()
}

// KeyID returns a text that identifies a list of values, for a map key:
// each value is preceded by its length in bytes (as a uvarint), so two
// different lists always give different texts, whatever bytes the values
// hold. Joining the values with a separator would not: "a\x00b"+"c" and
// "a"+"b\x00c" would meet.
func KeyID(values ...string) string {
	n := 0
	for _, v := range values {
		n += binary.MaxVarintLen64 + len(v)
	}
	buf := make([]byte, 0, n)
	for _, v := range values {
		buf = binary.AppendUvarint(buf, uint64(len(v)))
		buf = append(buf, v...)
	}
	return string(buf)
}
