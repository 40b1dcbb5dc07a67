package store

import (
	"math"
	"testing"

	"github.com/gridloupe/gridloupe/metrics"
)

// TestCircuitRecordRoundTrip: a bus with an incomer and a drive stores and
// reads back each circuit's phases, totals and current sequence, and its
// layout re-derives the circuits. src: DESIGN Field contract (several
// circuits); binary32 precision (relF32).
func TestCircuitRecordRoundTrip(t *testing.T) {
	t.Parallel()
	ch := []metrics.Channel{{Name: "va", Kind: metrics.Voltage, Phase: 'a'}, {Name: "vb", Kind: metrics.Voltage, Phase: 'b'}, {Name: "vc", Kind: metrics.Voltage, Phase: 'c'}}
	for _, n := range []string{"ia", "ib", "ic", "d1a", "d1b", "d1c"} {
		ch = append(ch, metrics.Channel{Name: n, Kind: metrics.Current, Phase: n[len(n)-1]})
	}
	s, err := metrics.NewSetup(metrics.Setup{Channels: ch, Orders: []int{1, 5, 7}, Wiring: metrics.Wye, NominalV: 230, ILA: 320, Reference: -1,
		Circuits: []metrics.Circuit{{Name: "incomer", Currents: []int{3, 4, 5}}, {Name: "drive1", Currents: []int{6, 7, 8}, ILA: 160}}})
	if err != nil {
		t.Fatal(err)
	}
	b, err := marshalLayout(s)
	if err != nil {
		t.Fatal(err)
	}
	ls, err := unmarshalLayout(b)
	if err != nil {
		t.Fatal(err)
	}
	if len(ls.Circuits) != 2 || ls.Circuits[1].Sub == nil || ls.IL(6) != 160 || ls.IL(3) != 320 {
		t.Fatalf("layout circuits %+v", ls.Circuits)
	}
	want := metrics.NewRecord(s)
	x := 1.0
	next := func() float64 { x = math.Mod(x*1.618+0.37, 97); return x }
	for i := range want.Channels {
		want.Channels[i].RMS = next()
		for j := range want.Channels[i].H {
			want.Channels[i].H[j].RMS, want.Channels[i].H[j].PhaseDeg = next(), next()
		}
	}
	for k := range want.Circuits {
		cr := want.Circuits[k].Rec
		for i := range cr.Phases {
			p := &cr.Phases[i]
			p.P, p.P1, p.Q1, p.S, p.S1, p.SN, p.DI, p.DV, p.SH, p.PF, p.DPF = next(), next(), next(), next(), next(), next(), next(), next(), next(), next(), next()
		}
		cr.Total = metrics.TotalValues{P: next(), Q1: next(), S: next(), Se: next(), Se1: next(), Ve: next(), Ie: next(), PF: next(), DPF: next(), P1Pos: next(), Q1Pos: next()}
		for j := range cr.SeqI {
			cr.SeqI[j].Pos, cr.SeqI[j].Neg, cr.SeqI[j].Zero = next(), next(), next()
		}
		cr.UnbI = next()
	}
	enc, err := encodeRecord(nil, want, 3, s)
	if err != nil {
		t.Fatal(err)
	}
	if got, wantN := len(enc), RecordBytes(s)-16-leafElemOverhead; got > wantN {
		t.Errorf("record %d bytes, RecordBytes budget %d", got, wantN)
	}
	got, err := decodeRecord(enc, metrics.Int3s, ls)
	if err != nil {
		t.Fatal(err)
	}
	for k := range want.Circuits {
		w, g := want.Circuits[k].Rec, got.Circuits[k].Rec
		if got.Circuits[k].Name != want.Circuits[k].Name || len(g.Phases) != 3 || len(g.SeqI) != 3 {
			t.Fatalf("circuit %d: %q, %d phases, %d sequence orders", k, got.Circuits[k].Name, len(g.Phases), len(g.SeqI))
		}
		for _, q := range [][2]float64{{w.Total.P, g.Total.P}, {w.Total.PF, g.Total.PF}, {w.Phases[2].DPF, g.Phases[2].DPF}, {w.SeqI[1].Neg, g.SeqI[1].Neg}, {w.UnbI, g.UnbI}} {
			if !near(q[0], q[1], relF32) {
				t.Errorf("circuit %d: got %v, want %v", k, q[1], q[0])
			}
		}
	}
}
