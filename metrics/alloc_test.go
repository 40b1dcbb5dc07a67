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

// TestComputeAllocsDeltaCircuits: a delta bus with two circuits of two
// CTs each computes and aggregates without allocating.
func TestComputeAllocsDeltaCircuits(t *testing.T) {
	s, err := NewSetup(Setup{
		Channels: []Channel{
			{Name: "vab", Kind: Voltage, Phase: 'a', To: 'b'}, {Name: "vcb", Kind: Voltage, Phase: 'c', To: 'b'},
			{Name: "ia", Kind: Current, Phase: 'a'}, {Name: "ic", Kind: Current, Phase: 'c'},
			{Name: "i2a", Kind: Current, Phase: 'a', DelayS: 1e-4}, {Name: "i2c", Kind: Current, Phase: 'c'},
		},
		Orders: allOrders(), Wiring: Delta, NominalV: 400, ILA: 160, Reference: -1,
		Circuits: []Circuit{{Name: "incomer", Currents: []int{2, 3}}, {Name: "drive", Currents: []int{4, 5}, ILA: 80}},
	})
	if err != nil {
		t.Fatal(err)
	}
	v := balancedV(231)
	ws := []wave{vll(v[0], v[1]), vll(v[2], v[1]), block120(100), shift(block120(100), -120*deg), block120(50), shift(block120(50), -120*deg)}
	in := inputFor(t, s, waves(2000, ws...))
	r := NewRecord(s)
	if n := testing.AllocsPerRun(100, func() { Compute(s, in, r) }); n != 0 {
		t.Errorf("Compute: %v allocs per call, want 0", n)
	}
	a := NewAggregator(s)
	out := NewRecord(s)
	if n := testing.AllocsPerRun(100, func() { a.Add(r); a.Result(out); a.Reset() }); n != 0 {
		t.Errorf("Aggregator: %v allocs per call, want 0", n)
	}
}

// TestRecordCopyToAllocs: copying into a record of the same shape (the
// hand-off to an encoding goroutine) allocates nothing.
func TestRecordCopyToAllocs(t *testing.T) {
	s, r := copyCase(t)
	dst := NewRecord(s)
	if n := testing.AllocsPerRun(20, func() { r.CopyTo(dst) }); n != 0 {
		t.Errorf("CopyTo: %v allocs, want 0", n)
	}
}
