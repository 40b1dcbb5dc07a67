package config

import "testing"

// TestUnbalanceCurrentCircuit: with circuits, an unbalance_current_pct rule
// that names a circuit with currents on a, b and c passes and keeps the
// circuit it watches (README, Alarm rules); without circuits the rule
// needs no circuit key, as before.
func TestUnbalanceCurrentCircuit(t *testing.T) {
	t.Parallel()
	for _, tc := range []struct {
		name, doc, circuit string
	}{
		{"circuit m on a bus", hdrW + "alarms:\n  - {name: x, metric: unbalance_current_pct, circuit: m, above: 5}\n", "m"},
		{"no circuits", hdr3 + "alarms:\n  - {name: x, metric: unbalance_current_pct, above: 5}\n", ""},
	} {
		t.Run(tc.name, func(t *testing.T) {
			c, err := Parse("ok.yaml", []byte(tc.doc))
			if err != nil {
				t.Fatal(err)
			}
			if got := c.Alarms[0].Circuit; got != tc.circuit {
				t.Errorf("circuit %q, want %q", got, tc.circuit)
			}
		})
	}
}
