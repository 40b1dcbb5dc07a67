package metrics

import (
	"errors"
	"testing"
)

// TestCircuits: North Weir DC-2 as one bus: an incomer (IL 320 A) feeding
// two drives (IL 160 A each), all on the bus voltages. Each circuit must
// read what a setup of the bus voltages and that circuit's CTs alone
// reads, and the incomer's P must be the drives' sum (Kirchhoff's current
// law at the bus: i_incomer = i_drive1 + i_drive2; P is linear in the
// current). src: DESIGN Field contract (several circuits on one bus;
// phases and total per circuit); IEEE 519 IL per circuit (REFERENCE §8).
func TestCircuits(t *testing.T) {
	t.Parallel()
	v := balancedV(230)
	d1 := []wave{sum(cosine(100, 1, -20*deg), cosine(20, 5, 160*deg)), sum(cosine(100, 1, -140*deg), cosine(20, 5, 40*deg)), sum(cosine(100, 1, 100*deg), cosine(20, 5, -80*deg))}
	d2 := []wave{cosine(60, 1, -35*deg), cosine(55, 1, -155*deg), cosine(62, 1, 85*deg)}
	inc := []wave{sum(d1[0], d2[0]), sum(d1[1], d2[1]), sum(d1[2], d2[2])}
	ch := []Channel{{Name: "va", Kind: Voltage, Phase: 'a'}, {Name: "vb", Kind: Voltage, Phase: 'b'}, {Name: "vc", Kind: Voltage, Phase: 'c'}}
	var ws []wave
	ws = append(ws, v...)
	for k, set := range [][]wave{inc, d1, d2} {
		for p := range 3 {
			ch = append(ch, Channel{Name: string(rune('x'+k)) + string(rune('a'+p)), Kind: Current, Phase: byte('a' + p)})
			ws = append(ws, set[p])
		}
	}
	s, err := NewSetup(Setup{Channels: ch, Orders: allOrders(), Wiring: Wye, NominalV: 230, ILA: 500, Reference: -1,
		Circuits: []Circuit{{Name: "incomer", Currents: []int{3, 4, 5}, ILA: 320}, {Name: "drive1", Currents: []int{6, 7, 8}, ILA: 160}, {Name: "drive2", Currents: []int{9, 10, 11}}}})
	if err != nil {
		t.Fatal(err)
	}
	r := NewRecord(s)
	Compute(s, inputFor(t, s, waves(nWin, ws...)), r)
	if len(r.Phases) != 0 || len(r.SeqI) != 0 || len(r.Circuits) != 3 || len(r.SeqV) == 0 {
		t.Fatalf("bus record: %d phases, %d current sequences, %d circuits, %d voltage sequences", len(r.Phases), len(r.SeqI), len(r.Circuits), len(r.SeqV))
	}
	for k, set := range [][]wave{inc, d1, d2} {
		alone := wyeSetup(t, false, allOrders())
		ra := NewRecord(alone)
		Compute(alone, inputFor(t, alone, waves(nWin, append(append([]wave(nil), v...), set...)...)), ra)
		c := r.Circuits[k].Rec
		for _, q := range []struct {
			name      string
			got, want float64
		}{
			{"p_w", c.Total.P, ra.Total.P}, {"q_var", c.Total.Q1, ra.Total.Q1}, {"se_va", c.Total.Se, ra.Total.Se},
			{"pf", c.Total.PF, ra.Total.PF}, {"phase b dpf", c.Phases[1].DPF, ra.Phases[1].DPF},
			{"current unbalance", c.UnbI, ra.UnbI},
		} {
			if !relNear(q.got, q.want) {
				t.Errorf("%s %s = %.12g, alone %.12g", r.Circuits[k].Name, q.name, q.got, q.want)
			}
		}
	}
	pSum := r.Circuits[1].Rec.Total.P + r.Circuits[2].Rec.Total.P
	if !relNear(r.Circuits[0].Rec.Total.P, pSum) {
		t.Errorf("incomer P %v, drives' sum %v", r.Circuits[0].Rec.Total.P, pSum)
	}
	// TDD on each circuit's own IL: drive1's 5th of 20 A is 12.5 % of its
	// 160 A; drive2 falls back to the bus il_a. src: IEEE 519 TDD = IH/IL.
	if got := r.Channels[6].TDDPct; !near(got, 12.5, 1e-6) {
		t.Errorf("drive1 ia TDD %v %%, want 12.5 (20 A of IL 160 A)", got)
	}
	if got := r.Channels[3].H[4].PctIL; !near(got, 100*20/320.0, 1e-6) {
		t.Errorf("incomer ia 5th %v %% of IL, want 6.25 (20 A of 320 A)", got)
	}
	if s.IL(9) != 500 {
		t.Errorf("drive2 IL %v, want the bus il_a 500", s.IL(9))
	}
	// aggregation per circuit
	a := NewAggregator(s)
	a.Add(r)
	a.Add(r)
	out := NewRecord(s)
	a.Result(out)
	if !relNear(out.Circuits[1].Rec.Total.P, r.Circuits[1].Rec.Total.P) || !relNear(out.Circuits[0].Rec.Phases[2].PF, r.Circuits[0].Rec.Phases[2].PF) {
		t.Errorf("aggregate of two equal windows: drive1 P %v (window %v)", out.Circuits[1].Rec.Total.P, r.Circuits[1].Rec.Total.P)
	}
	c := r.Clone()
	c.Circuits[0].Rec.Total.P = 0
	if r.Circuits[0].Rec.Total.P == 0 {
		t.Error("Clone shares circuit records")
	}
}

func TestCircuitErrors(t *testing.T) {
	t.Parallel()
	ch := []Channel{{Name: "va", Kind: Voltage, Phase: 'a'}, {Name: "ia", Kind: Current, Phase: 'a'}, {Name: "i2", Kind: Current, Phase: 'a'}}
	for _, c := range []struct {
		name string
		cs   []Circuit
	}{
		{"current in no circuit", []Circuit{{Name: "m", Currents: []int{1}}}},
		{"current twice", []Circuit{{Name: "m", Currents: []int{1}}, {Name: "n", Currents: []int{1}}}},
		{"a voltage as current", []Circuit{{Name: "m", Currents: []int{0, 1, 2}}}},
		{"name twice", []Circuit{{Name: "m", Currents: []int{1}}, {Name: "m", Currents: []int{2}}}},
	} {
		_, err := NewSetup(Setup{Channels: ch, Orders: []int{1}, Wiring: SinglePhase, NominalV: 230, Reference: -1, Circuits: c.cs})
		if !errors.Is(err, ErrCircuit) {
			t.Errorf("%s: err %v, want ErrCircuit (src: common practice, no source)", c.name, err)
		}
	}
}
