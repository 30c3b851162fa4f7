package reconcile

import (
	"testing"

	"trueup/inputerr"
)

// TestMethodTable checks every entry of the table of methods: ByName
// builds it under its name, its label reads back to the same settings,
// no two entries share a name or a label, NonNegativeDefault is on
// exactly for the methods that accept Problem.Nonnegative and Locks for
// those that accept Problem.Locks.
func TestMethodTable(t *testing.T) {
	st := grouped(t, 2, 2, 2)
	p := problemFor(st, 30, 2, 3)
	labels := map[string]string{}
	for _, info := range Methods() {
		if info.Help == "" || info.Explanation == "" {
			t.Errorf("%s: help or explanation missing", info.Name)
		}
		var covs []string
		at := ""
		switch info.Param {
		case CovParam:
			covs = CovNames()
		case LevelParam:
			at = "region"
			covs = []string{""}
		default:
			covs = []string{""}
		}
		for _, cov := range covs {
			m, err := ByName(info.Name, cov, at)
			if err != nil || m.Name() != info.Name {
				t.Fatalf("ByName(%q, %q, %q) = %v, %v", info.Name, cov, at, m, err)
			}
			label := Label(info.Name, cov, at)
			if prev, dup := labels[label]; dup {
				t.Errorf("label %q is both %s and %s", label, prev, info.Name)
			}
			labels[label] = info.Name
			name, lcov, lat, ok := ParseLabel(label)
			if !ok || name != info.Name || lcov != cov || lat != at {
				t.Errorf("ParseLabel(%q) = %q %q %q %v, want %q %q %q", label, name, lcov, lat, ok, info.Name, cov, at)
			}
			if fromLabel, err := ByName(label, "", ""); err != nil || fromLabel != m {
				t.Errorf("ByName(%q) = %v, %v; want %v", label, fromLabel, err, m)
			}
		}
		m, _ := ByName(info.Name, "", at)
		q := p
		q.Nonnegative = true
		if info.Temporal {
			q.Temporal = []TemporalBase{summedOver(p.Base, len(p.Base[0]))}
		}
		_, err := m.Reconcile(q)
		if supported := err == nil; supported != info.NonNegativeDefault {
			t.Errorf("%s: NonNegativeDefault %v, but reconciling with Nonnegative gives %v", info.Name, info.NonNegativeDefault, err)
		}
		q = p
		q.Locks = []Lock{{Node: 0, Step: 1, Value: p.Base[0][1]}}
		_, err = m.Reconcile(q)
		if supported := err == nil; supported != info.Locks {
			t.Errorf("%s: Locks %v, but reconciling with a lock gives %v", info.Name, info.Locks, err)
		}
	}
	if len(labels) == 0 {
		t.Fatal("no methods")
	}
}

func TestByNameRefusals(t *testing.T) {
	for _, bad := range [][3]string{
		{"mint-variance", "shrink", ""},    // the covariance given twice
		{"middle-out@region", "", "total"}, // the level given twice
		{"mint-diagonal", "", ""},          // no such covariance
		{"bottom-up-x", "", ""},            // no such method
		{"top-down", "", ""},
	} {
		if _, err := ByName(bad[0], bad[1], bad[2]); err == nil || !inputerr.Is(err) {
			t.Errorf("ByName%q = %v, want an input error", bad, err)
		}
	}
}

// summedOver gives every node's base forecasts summed over blocks of k
// steps, as a temporal method's coarser forecasts.
func summedOver(base [][]float64, k int) TemporalBase {
	tb := TemporalBase{Every: k, Base: make([][]float64, len(base))}
	for i, b := range base {
		for start := 0; start < len(b); start += k {
			sum := 0.0
			for _, v := range b[start:min(start+k, len(b))] {
				sum += v
			}
			tb.Base[i] = append(tb.Base[i], sum)
		}
	}
	return tb
}
