package quantity

import "testing"

// TestTables: every row is filled in, names are unique across both tables
// (they are also alarm metric names), and the rules are known ones.
func TestTables(t *testing.T) {
	seen := map[string]bool{}
	for _, tab := range [][]Q{Channels(), Phases()} {
		for i, q := range tab {
			switch {
			case q.Name == "" || q.Unit == "" || q.Doc == "":
				t.Errorf("row %d (%q): name, unit and doc are required", i, q.Name)
			case seen[q.Name]:
				t.Errorf("%q appears twice", q.Name)
			case q.Agg < Derived || q.Agg > Max:
				t.Errorf("%q: aggregation rule %d unknown", q.Name, q.Agg)
			case q.Out == 0:
				t.Errorf("%q: no output carries it", q.Name)
			case q.Out&Store != 0 && q.Since == 0:
				t.Errorf("%q: stored without the record version that first holds it", q.Name)
			case q.Out&Wide != 0 && q.Short == "":
				t.Errorf("%q: in the wide table without a column label", q.Name)
			}
			seen[q.Name] = true
		}
	}
	// src: README "Record": the key order of the record schema
	want := []string{"rms", "dc", "thd_pct", "thd_h50_pct", "tdd_pct", "tdd_h50_pct", "crest_factor"}
	for i, q := range Channels() {
		if q.Name != want[i] {
			t.Errorf("channel quantity %d is %q, want %q (the order is the interface)", i, q.Name, want[i])
		}
	}
}

// TestApplies: the conditions of README "Record" (tdd_* only on currents
// with il_a, _h50 values only with harmonics: all).
func TestApplies(t *testing.T) {
	for _, c := range []struct {
		id                        ID
		current, allOrders, hasIL bool
		want                      bool
	}{
		{TDD, true, false, true, true}, {TDD, false, true, true, false}, {TDD, true, true, false, false},
		{TDDH50, true, false, true, false}, {THDH50, false, true, false, true}, {CrestFactor, false, false, false, true},
	} {
		if got := Channel(c.id).Applies(c.current, c.allOrders, c.hasIL); got != c.want {
			t.Errorf("%s (current %v, all %v, il %v): %v, want %v", Channel(c.id).Name, c.current, c.allOrders, c.hasIL, got, c.want)
		}
	}
}
