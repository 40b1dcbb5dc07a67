package live

import (
	"strings"
	"testing"

	"github.com/gridloupe/gridloupe/metrics"
)

// TestCircuitFields: with circuits the register map and the Prometheus
// families carry each circuit's totals and phases under
// circuit.<name>.…, labelled with the circuit, read from that circuit's
// values; a setup without circuits has no such field. src: DESIGN Field
// contract (several circuits; Modbus quantity = the record's key path).
func TestCircuitFields(t *testing.T) {
	t.Parallel()
	ch := []metrics.Channel{{Name: "va", Kind: metrics.Voltage, Phase: 'a'}, {Name: "ia", Kind: metrics.Current, Phase: 'a'}, {Name: "i2", Kind: metrics.Current, Phase: 'a'}}
	s, err := metrics.NewSetup(metrics.Setup{Channels: ch, Orders: []int{1}, Wiring: metrics.SinglePhase, NominalV: 230, ILA: 100, Reference: -1,
		Circuits: []metrics.Circuit{{Name: "incomer", Currents: []int{1}}, {Name: "drive1", Currents: []int{2}, ILA: 40}}})
	if err != nil {
		t.Fatal(err)
	}
	r := metrics.NewRecord(s)
	r.Circuits[1].Rec.Total.P = 1234
	r.Circuits[1].Rec.Phases[0].PF = 0.91
	var got []string
	for _, f := range Fields(s) {
		switch f.Key {
		case "circuit.drive1.total.p_w":
			if f.Value(r) != 1234 || f.Circuit != "drive1" {
				t.Errorf("%s = %v (circuit %q)", f.Key, f.Value(r), f.Circuit)
			}
		case "circuit.drive1.phase.a.pf":
			if f.Value(r) != 0.91 {
				t.Errorf("%s = %v", f.Key, f.Value(r))
			}
		case "total.p_w":
			t.Errorf("the bus has no total with circuits")
		}
		if strings.HasPrefix(f.Key, "circuit.") {
			got = append(got, f.Key)
		}
	}
	if len(got) == 0 {
		t.Fatal("no circuit fields")
	}
	plain, _ := metrics.NewSetup(metrics.Setup{Channels: ch[:2], Orders: []int{1}, Wiring: metrics.SinglePhase, NominalV: 230, Reference: -1})
	for _, f := range Fields(plain) {
		if strings.HasPrefix(f.Key, "circuit.") || f.Circuit != "" {
			t.Errorf("setup without circuits has %s", f.Key)
		}
	}
	for _, f := range Fields(s) {
		if f.Key == "circuit.drive1.total.pf" && !metrics.IsNull(f.Value(&metrics.Record{})) {
			t.Errorf("missing circuit values read %v, want null", f.Value(&metrics.Record{}))
		}
	}
}
