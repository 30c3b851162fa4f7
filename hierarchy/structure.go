// Package hierarchy builds the grouped structure of a set of bottom series:
// the chains named by --nest, every node formed by a prefix of each chain,
// the levels those nodes fall into, and the sparse summing matrix that adds
// bottom series up to every node.
package hierarchy

import (
	"fmt"
	"math"
	"slices"
	"sort"
	"strconv"
	"strings"

	"trueup/inputerr"
)

var nan = math.NaN()

// Chain is a list of key attributes from coarse to fine, such as
// region, store.
type Chain []string

// ParseNest turns chain texts ("region,store", "category") into chains.
// An attribute may appear in only one chain and only once.
func ParseNest(values []string) ([]Chain, error) {
	if len(values) == 0 {
		return nil, inputerr.ForOption("Chains", "no key columns named: give one or more chains of key columns, coarse to fine, such as region,store and category")
	}
	seen := map[string]bool{}
	var chains []Chain
	for _, v := range values {
		var c Chain
		for _, a := range strings.Split(v, ",") {
			a = strings.TrimSpace(a)
			if a == "" {
				return nil, inputerr.ForOption("Chains", "chain %q has an empty column name", v)
			}
			if seen[a] {
				return nil, inputerr.ForOption("Chains", "column %q is named twice in the chains", a)
			}
			seen[a] = true
			c = append(c, a)
		}
		chains = append(chains, c)
	}
	return chains, nil
}

// Level is a set of nodes aggregated the same way. Depth[c] is how many
// attributes of chain c the level keeps (0 = aggregated over the chain).
type Level struct {
	Name  string
	Depth []int
	Nodes []int // indices into Structure.Nodes, ascending
}

// Node is one series of the structure. Key has one entry per attribute of
// Structure.Attrs; "" where the node aggregates over that attribute.
type Node struct {
	Level int
	Key   []string
}

// Structure is the full grouped structure. Nodes are ordered by level
// (coarsest first, so the total is node 0) and by key within a level; the
// bottom level comes last and its order matches the columns of S. The
// navigation between nodes (Lookup, NodeAt, Splits, Ancestors, Sub) is in
// navigation.go.
type Structure struct {
	Chains []Chain
	Attrs  []string // all attributes, chain by chain, coarse to fine
	Levels []Level
	Nodes  []Node
	S      *SumMatrix

	nav navigation
}

// BottomIndex returns the position (0..m−1) of the bottom series with the
// given key (one value per attribute of Attrs).
func (s *Structure) BottomIndex(key []string) (int, bool) {
	i, ok := s.Lookup(key)
	if !ok || i < s.BottomOffset() {
		return -1, false
	}
	return i - s.BottomOffset(), true
}

// NumBottom is m, the number of bottom series.
func (s *Structure) NumBottom() int { _, m := s.S.Dims(); return m }

// BottomOffset is the index in Nodes of the first bottom node.
func (s *Structure) BottomOffset() int { return len(s.Nodes) - s.NumBottom() }

// LevelByName finds a level by its name.
func (s *Structure) LevelByName(name string) (int, bool) {
	for i, l := range s.Levels {
		if l.Name == name {
			return i, true
		}
	}
	return -1, false
}

// LevelNames lists the level names in order.
func (s *Structure) LevelNames() []string {
	out := make([]string, len(s.Levels))
	for i, l := range s.Levels {
		out[i] = l.Name
	}
	return out
}

// quotePath shows the values of a key path quoted (Go syntax, so that
// any character is visible) and joined by "/": "North"/"N01".
func quotePath(values []string) string {
	q := make([]string, len(values))
	for i, v := range values {
		q[i] = strconv.Quote(v)
	}
	return strings.Join(q, "/")
}

// levelName joins the kept attributes with "+", or "total".
func levelName(chains []Chain, depth []int) string {
	var kept []string
	for c, d := range depth {
		kept = append(kept, chains[c][:d]...)
	}
	if len(kept) == 0 {
		return "total"
	}
	return strings.Join(kept, "+")
}

// Build forms the structure from the bottom keys. bottom[j] holds bottom
// series j's value for every attribute of the chains, in chain order. Keys
// must be distinct and non-empty. A fine attribute value that appears under
// two different coarser values of its chain (one store in two regions) is an
// input error naming it.
func Build(chains []Chain, bottom [][]string) (*Structure, error) {
	var attrs []string
	start := make([]int, len(chains)) // offset of chain c in attrs
	for c, ch := range chains {
		start[c] = len(attrs)
		attrs = append(attrs, ch...)
	}
	if len(bottom) == 0 {
		return nil, inputerr.New("no series to forecast")
	}
	if err := checkLevelNames(chains); err != nil {
		return nil, err
	}
	// Nesting: within a chain, each value at depth k>0 has one parent path.
	// Paths are compared value by value, never as joined text, so that a
	// key holding the joining character cannot pass for another path.
	for c, ch := range chains {
		for k := 1; k < len(ch); k++ {
			parent := map[string][]string{}
			for _, key := range bottom {
				v := key[start[c]+k]
				p := key[start[c] : start[c]+k]
				if prev, ok := parent[v]; ok && !slices.Equal(prev, p) {
					return nil, inputerr.New(
						"nesting violated: %s %q appears under %s %s and under %s; each %s must belong to one %s",
						ch[k], v, strings.Join(ch[:k], "/"), quotePath(prev), quotePath(p), ch[k], strings.Join(ch[:k], "/"))
				}
				parent[v] = p
			}
		}
	}
	for j, key := range bottom {
		if len(key) != len(attrs) {
			panic(fmt.Sprintf("hierarchy: bottom key %d has %d values for %d attributes", j, len(key), len(attrs)))
		}
		for a, v := range key {
			if v == "" {
				return nil, inputerr.New("bottom key %s has an empty %s (an empty value marks a node that adds that column up)", strings.Join(key, "/"), attrs[a])
			}
		}
	}
	in := newInterner(attrs, bottom)
	// Sort bottom keys so node order is deterministic whatever the input
	// order. Codes are in the order of the values, so comparing codes
	// compares keys.
	codes := make([][]int32, len(bottom))
	for j, key := range bottom {
		codes[j] = in.codes(key)
	}
	order := make([]int, len(bottom))
	for i := range order {
		order[i] = i
	}
	sort.Slice(order, func(a, b int) bool { return lessCodes(codes[order[a]], codes[order[b]]) })
	for i := 1; i < len(order); i++ {
		if equalCodes(codes[order[i-1]], codes[order[i]]) {
			return nil, inputerr.New("bottom key %s appears twice", quotePath(bottom[order[i]]))
		}
	}
	sorted := make([][]int32, len(bottom))
	for i, o := range order {
		sorted[i] = codes[o]
	}
	m := len(sorted)

	// Enumerate depth vectors in lexicographic order: total first, bottom last.
	var depths [][]int
	var rec func(c int, cur []int)
	rec = func(c int, cur []int) {
		if c == len(chains) {
			depths = append(depths, append([]int(nil), cur...))
			return
		}
		for d := 0; d <= len(chains[c]); d++ {
			rec(c+1, append(cur, d))
		}
	}
	rec(0, nil)
	sort.SliceStable(depths, func(a, b int) bool {
		sa, sb := sum(depths[a]), sum(depths[b])
		if sa != sb {
			return sa < sb
		}
		for c := range depths[a] {
			if depths[a][c] != depths[b][c] {
				return depths[a][c] < depths[b][c]
			}
		}
		return false
	})

	st := &Structure{Chains: chains, Attrs: attrs}
	st.nav = navigation{dict: in.dict,
		index: make(map[string]int, m), nodeAt: make([][]int32, len(depths))}
	var members [][]int
	buf := make([]byte, 4*len(attrs))
	for li, depth := range depths {
		lv := Level{Name: levelName(chains, depth), Depth: depth}
		groups := map[string]int32{}
		var keys [][]int32
		var mem [][]int
		groupOf := make([]int32, m)
		for j, key := range sorted {
			nk := make([]int32, len(attrs))
			for c, d := range depth {
				copy(nk[start[c]:start[c]+d], key[start[c]:start[c]+d])
			}
			id := packCodes(buf, nk)
			g, ok := groups[string(id)]
			if !ok {
				g = int32(len(keys))
				groups[string(id)] = g
				keys = append(keys, nk)
				mem = append(mem, nil)
			}
			mem[g] = append(mem[g], j)
			groupOf[j] = g
		}
		idx := make([]int, len(keys))
		for i := range idx {
			idx[i] = i
		}
		sort.Slice(idx, func(a, b int) bool { return lessCodes(keys[idx[a]], keys[idx[b]]) })
		nodeOfGroup := make([]int32, len(keys))
		for _, g := range idx {
			i := len(st.Nodes)
			nodeOfGroup[g] = int32(i)
			lv.Nodes = append(lv.Nodes, i)
			st.Nodes = append(st.Nodes, Node{Level: li, Key: in.key(keys[g])})
			st.nav.index[string(packCodes(buf, keys[g]))] = i
			members = append(members, mem[g])
		}
		for j, g := range groupOf {
			groupOf[j] = nodeOfGroup[g]
		}
		st.nav.nodeAt[li] = groupOf
		st.Levels = append(st.Levels, lv)
	}
	st.S = NewSumMatrix(m, members)
	st.nav.splits = newSplits(st)
	return st, nil
}

func sum(xs []int) int {
	t := 0
	for _, x := range xs {
		t += x
	}
	return t
}

func lessCodes(a, b []int32) bool {
	for i := range a {
		if a[i] != b[i] {
			return a[i] < b[i]
		}
	}
	return false
}

func equalCodes(a, b []int32) bool {
	for i := range a {
		if a[i] != b[i] {
			return false
		}
	}
	return true
}
