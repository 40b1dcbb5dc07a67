package metrics

import (
	"errors"
	"testing"
)

func TestNewSetupErrors(t *testing.T) {
	t.Parallel()
	v := func(n string, p byte) Channel { return Channel{Name: n, Kind: Voltage, Phase: p} }
	i := func(n string, p byte) Channel { return Channel{Name: n, Kind: Current, Phase: p} }
	ok := Setup{Channels: []Channel{v("va", 'a'), i("ia", 'a')}, Orders: []int{1, 5, 7}, Wiring: SinglePhase, NominalV: 230}
	with := func(f func(*Setup)) Setup {
		s := ok
		s.Channels = append([]Channel(nil), ok.Channels...)
		f(&s)
		return s
	}
	cases := []struct {
		name string
		s    Setup
		want error
		src  string
	}{
		{"no channels", with(func(s *Setup) { s.Channels = nil }), ErrNoChannels, "common practice, no source"},
		{"bad wiring", with(func(s *Setup) { s.Wiring = 0 }), ErrWiring, "DESIGN config: single-phase | wye"},
		{"negative nominal", with(func(s *Setup) { s.NominalV = -1 }), ErrNominal, "common practice, no source"},
		{"unknown kind", with(func(s *Setup) { s.Channels[1].Kind = 9 }), ErrChannel, "DESIGN config: kind voltage | current"},
		{"phase b in single-phase", with(func(s *Setup) { s.Channels[1].Phase = 'b' }), ErrChannel, "DESIGN: single-phase has one phase"},
		{"neutral voltage", with(func(s *Setup) { s.Channels[0].Phase = 'n' }), ErrChannel, "DESIGN config: phase n is a neutral current"},
		{"two voltages on a", with(func(s *Setup) { s.Channels = append(s.Channels, v("va2", 'a')) }), ErrDuplicate, "common practice, no source"},
		{"negative full scale", with(func(s *Setup) { s.Channels[0].FullScale = -1 }), ErrChannel, "common practice, no source"},
		{"orders without 1", with(func(s *Setup) { s.Orders = []int{5, 7} }), ErrOrders, "DESIGN: the fundamental is always first"},
		{"orders descending", with(func(s *Setup) { s.Orders = []int{1, 7, 5} }), ErrOrders, "DESIGN: orders ascend"},
		{"order 51", with(func(s *Setup) { s.Orders = []int{1, 51} }), ErrOrders, "DESIGN: orders 2–50"},
		{"reference is a current", with(func(s *Setup) { s.Reference = 1 }), ErrReference, "DESIGN: reference is a voltage channel"},
		{"reference out of range", with(func(s *Setup) { s.Reference = 7 }), ErrReference, "common practice, no source"},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			t.Parallel()
			if _, err := NewSetup(c.s); !errors.Is(err, c.want) {
				t.Errorf("err %v, want %v (%s)", err, c.want, c.src)
			}
		})
	}
	if _, err := NewSetup(ok); err != nil {
		t.Fatalf("valid setup: %v", err)
	}
}

func TestNewSetupDerived(t *testing.T) {
	t.Parallel()
	in := Setup{
		Channels: []Channel{
			{Name: "ic", Kind: Current, Phase: 'c'}, {Name: "va", Kind: Voltage, Phase: 'a'},
			{Name: "ia", Kind: Current, Phase: 'a'}, {Name: "vc", Kind: Voltage, Phase: 'c'},
			{Name: "in", Kind: Current, Phase: 'n'}, {Name: "vb", Kind: Voltage, Phase: 'b'},
		},
		Orders: allOrders(), Wiring: Wye, Reference: -1,
	}
	s, err := NewSetup(in)
	if err != nil {
		t.Fatal(err)
	}
	// Pairs in a, b, c order for phases with both V and I (DESIGN
	// interface contract: phases).
	want := []Pair{{Phase: 'a', V: 1, I: 2}, {Phase: 'c', V: 3, I: 0}}
	if len(s.Pairs) != len(want) || s.Pairs[0] != want[0] || s.Pairs[1] != want[1] {
		t.Errorf("pairs %v, want %v", s.Pairs, want)
	}
	if s.Neutral != 4 || s.VIdx != [3]int{1, 5, 3} || s.IIdx != [3]int{2, -1, 0} || s.Reference != 1 || !s.AllOrders {
		t.Errorf("neutral %d vidx %v iidx %v ref %d all %v", s.Neutral, s.VIdx, s.IIdx, s.Reference, s.AllOrders)
	}
	r := NewRecord(s)
	if len(r.Channels) != 6 || len(r.Channels[0].H) != 50 || r.Channels[0].H[49].H != 50 || len(r.Phases) != 2 ||
		r.Phases[1].Phase != 'c' || len(r.SeqV) != 50 || len(r.SeqI) != 0 {
		t.Errorf("record shape: %d channels, %d phases, %d seqV, %d seqI", len(r.Channels), len(r.Phases), len(r.SeqV), len(r.SeqI))
	}
	// NewSetup copies: changing the caller's slices changes nothing.
	in.Orders[0] = 9
	in.Channels[0].Name = "x"
	if s.Orders[0] != 1 || s.Channels[0].Name != "ic" {
		t.Error("NewSetup shares the caller's slices")
	}
}

func TestComputeWithoutNewSetup(t *testing.T) {
	t.Parallel()
	s := &Setup{Channels: []Channel{{Name: "va", Kind: Voltage, Phase: 'a'}}, Orders: []int{1}}
	r := NewRecord(s)
	Compute(s, &Input{}, r)
	checkNoInf(t, r)
	if r.Flags != FlagUndefined || !IsNull(r.Channels[0].RMS) {
		t.Errorf("flags %v rms %v, want undefined and null (Setup not from NewSetup)", r.Flags.Names(), r.Channels[0].RMS)
	}
}

func TestParseInterval(t *testing.T) {
	t.Parallel()
	for _, l := range IntervalLabels() {
		iv, ok := ParseInterval(l)
		if !ok || iv.String() != l {
			t.Errorf("%q: %v %v (DESIGN: closed label set)", l, iv, ok)
		}
	}
	for _, l := range []string{"", "10m0s", "200MS", "invalid"} {
		if _, ok := ParseInterval(l); ok {
			t.Errorf("%q parsed (DESIGN: only 200ms, 3s, 10min, 2h)", l)
		}
	}
}

func FuzzParseInterval(f *testing.F) {
	for _, l := range []string{"200ms", "3s", "10min", "2h", "", "10m0s"} {
		f.Add(l)
	}
	f.Fuzz(func(t *testing.T, s string) {
		iv, ok := ParseInterval(s)
		if ok != (iv.String() == s) {
			t.Errorf("%q: parsed %v (%v), prints %q", s, iv, ok, iv.String())
		}
	})
}
