package hierarchy

import (
	"strings"
	"testing"

	"trueup/inputerr"
)

// A small grouped structure written out by hand: two regions, three stores
// (N1, N2 in north; S1 in south), crossed with two categories. The bottom
// series are the six region+store+category cells.
func smallStructure(t *testing.T) *Structure {
	t.Helper()
	chains, err := ParseNest([]string{"region,store", "category"})
	if err != nil {
		t.Fatal(err)
	}
	var bottom [][]string
	// Deliberately unsorted: Build must order them itself.
	for _, k := range []string{"south/S1/toys", "north/N2/food", "north/N1/toys", "north/N1/food", "south/S1/food", "north/N2/toys"} {
		bottom = append(bottom, strings.Split(k, "/"))
	}
	st, err := Build(chains, bottom)
	if err != nil {
		t.Fatal(err)
	}
	return st
}

func TestLevelsAndNames(t *testing.T) {
	st := smallStructure(t)
	want := []string{"total", "category", "region", "region+category", "region+store", "region+store+category"}
	if got := st.LevelNames(); strings.Join(got, ",") != strings.Join(want, ",") {
		t.Fatalf("levels %v, want %v", got, want)
	}
	counts := []int{1, 2, 2, 4, 3, 6}
	for i, l := range st.Levels {
		if len(l.Nodes) != counts[i] {
			t.Errorf("level %s has %d nodes, want %d", l.Name, len(l.Nodes), counts[i])
		}
	}
	if n, m := st.S.Dims(); n != 18 || m != 6 {
		t.Fatalf("S is %d×%d, want 18×6", n, m)
	}
}

func TestSummingMatrixByHand(t *testing.T) {
	st := smallStructure(t)
	// Columns (bottom order): N1/food N1/toys N2/food N2/toys S1/food S1/toys.
	want := [][]float64{
		{1, 1, 1, 1, 1, 1}, // total
		{1, 0, 1, 0, 1, 0}, // food
		{0, 1, 0, 1, 0, 1}, // toys
		{1, 1, 1, 1, 0, 0}, // north
		{0, 0, 0, 0, 1, 1}, // south
		{1, 0, 1, 0, 0, 0}, // north food
		{0, 1, 0, 1, 0, 0}, // north toys
		{0, 0, 0, 0, 1, 0}, // south food
		{0, 0, 0, 0, 0, 1}, // south toys
		{1, 1, 0, 0, 0, 0}, // north N1
		{0, 0, 1, 1, 0, 0}, // north N2
		{0, 0, 0, 0, 1, 1}, // south S1
		{1, 0, 0, 0, 0, 0},
		{0, 1, 0, 0, 0, 0},
		{0, 0, 1, 0, 0, 0},
		{0, 0, 0, 1, 0, 0},
		{0, 0, 0, 0, 1, 0},
		{0, 0, 0, 0, 0, 1},
	}
	for i := range want {
		for j := range want[i] {
			if got := st.S.At(i, j); got != want[i][j] {
				t.Errorf("S[%d][%d] (%s) = %v, want %v", i, j, st.Label(i), got, want[i][j])
			}
		}
	}
	if j, ok := st.BottomIndex([]string{"north", "N2", "toys"}); !ok || j != 3 {
		t.Errorf("BottomIndex = %d, %v", j, ok)
	}
	if got := st.Label(7); got != "region=south category=food" {
		t.Errorf("label %q", got)
	}
}

func TestMulVecAndTranspose(t *testing.T) {
	st := smallStructure(t)
	b := []float64{1, 2, 3, 4, 5, 6}
	y := st.S.MulVec(nil, b)
	if y[0] != 21 || y[1] != 9 || y[4] != 11 || y[10] != 7 {
		t.Errorf("S·b = %v", y)
	}
	// Sᵀ·1 counts the nodes each bottom series belongs to: one per level.
	ones := make([]float64, len(y))
	for i := range ones {
		ones[i] = 1
	}
	for j, c := range st.S.MulTransVec(nil, ones) {
		if c != 6 {
			t.Errorf("bottom %d is in %v nodes, want 6", j, c)
		}
	}
}

func TestAggregateTreatsMissingAsNotYetOpen(t *testing.T) {
	st := smallStructure(t)
	nan := nan
	bottom := [][]float64{
		{1, 1}, {1, 1}, {nan, 2}, {nan, 2}, {1, nan}, {1, nan},
	}
	agg := st.S.Aggregate(bottom)
	if agg[0][0] != 4 || agg[0][1] != 6 {
		t.Errorf("total %v", agg[0])
	}
	if n2 := agg[10]; n2[0] == n2[0] || n2[1] != 4 {
		t.Errorf("store N2 (opens at period 2) %v, want [NaN 4]", n2)
	}
}

func TestNestingViolationNamesTheStore(t *testing.T) {
	chains, _ := ParseNest([]string{"region,store", "category"})
	_, err := Build(chains, [][]string{{"north", "X9", "food"}, {"south", "X9", "toys"}})
	if err == nil || !inputerr.Is(err) || !strings.Contains(err.Error(), `"X9"`) {
		t.Fatalf("got %v, want an input error naming store X9", err)
	}
}

func TestParseNestErrors(t *testing.T) {
	for _, bad := range [][]string{nil, {"region,,store"}, {"region", "region"}} {
		if _, err := ParseNest(bad); err == nil || !inputerr.Is(err) {
			t.Errorf("ParseNest(%q) = %v, want input error", bad, err)
		}
	}
}

// TestNestingComparesPathsValueByValue: the parent paths "x/y"+"z" and
// "x"+"y/z" joined with "/" read the same; store S1 under both is still
// two parents. Before, the joined paths compared equal and the violation
// passed.
func TestNestingComparesPathsValueByValue(t *testing.T) {
	chains, _ := ParseNest([]string{"region,district,store"})
	_, err := Build(chains, [][]string{{"x/y", "z", "S1"}, {"x", "y/z", "S1"}})
	if err == nil || !inputerr.Is(err) || !strings.Contains(err.Error(), `"x/y"/"z"`) || !strings.Contains(err.Error(), `"x"/"y/z"`) {
		t.Fatalf("got %v, want a nesting violation showing both parent paths", err)
	}
}

// TestLevelNamesMustDiffer: a key column named "total", or "a+b" beside
// the chains a and b, would give two levels one name; before, both levels
// were written and scored under that one name.
func TestLevelNamesMustDiffer(t *testing.T) {
	for _, nest := range [][]string{{"total"}, {"region", "total"}, {"a", "b", "a+b"}} {
		chains, err := ParseNest(nest)
		if err != nil {
			t.Fatal(err)
		}
		key := make([]string, len(nest))
		for i := range key {
			key[i] = "x"
		}
		_, err = Build(chains, [][]string{key})
		if err == nil || !inputerr.Is(err) || !strings.Contains(err.Error(), "two levels") {
			t.Errorf("%v: got %v, want an input error about two levels of one name", nest, err)
		}
	}
}
