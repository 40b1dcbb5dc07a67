//go:build !race

package metrics

import "testing"

func TestComputeAllocs(t *testing.T) {
	s, err := NewSetup(Setup{
		Channels: []Channel{
			{Name: "va", Kind: Voltage, Phase: 'a'}, {Name: "vb", Kind: Voltage, Phase: 'b'}, {Name: "vc", Kind: Voltage, Phase: 'c'},
			{Name: "ia", Kind: Current, Phase: 'a', DelayS: 1e-4}, {Name: "ib", Kind: Current, Phase: 'b', DelayS: 1e-4},
			{Name: "ic", Kind: Current, Phase: 'c', DelayS: 1e-4},
		},
		Orders: allOrders(), Wiring: Wye, NominalV: 230, ILA: 160,
	})
	if err != nil {
		t.Fatal(err)
	}
	ws := append(balancedV(230), block120(100), shift(block120(100), 120*deg), shift(block120(100), -120*deg))
	in := inputFor(t, s, waves(2000, ws...))
	r := NewRecord(s)
	if n := testing.AllocsPerRun(100, func() { Compute(s, in, r) }); n != 0 {
		t.Errorf("Compute: %v allocs per call, want 0", n)
	}
	a := NewAggregator(s)
	out := NewRecord(s)
	if n := testing.AllocsPerRun(100, func() { a.Add(r) }); n != 0 {
		t.Errorf("Aggregator.Add: %v allocs per call, want 0", n)
	}
	if n := testing.AllocsPerRun(100, func() { a.Result(out) }); n != 0 {
		t.Errorf("Aggregator.Result: %v allocs per call, want 0", n)
	}
	if n := testing.AllocsPerRun(100, func() { a.Reset() }); n != 0 {
		t.Errorf("Aggregator.Reset: %v allocs per call, want 0", n)
	}
}
