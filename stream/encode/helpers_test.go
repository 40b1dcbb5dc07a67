package encode

import (
	"math"
	"math/rand/v2"
	"testing"
	"time"

	"github.com/gridloupe/gridloupe/metrics"
)

// setupSpec describes a test setup; buildSetup derives the fields that
// metrics.NewSetup derives (Pairs, Neutral, VIdx, IIdx) the obvious way.
type setupSpec struct {
	chans  string // one "kind phase" pair per channel: "va" = voltage a, "in" = current n
	orders []int  // nil = all orders 1..50
	ila    float64
	wiring metrics.Wiring
}

var chanNames = map[string]string{
	"va": "va", "vb": "vb", "vc": "vc", "ia": "ia", "ib": "ib", "ic": "ic", "in": "in",
}

func buildSetup(tb testing.TB, sp setupSpec) *metrics.Setup {
	tb.Helper()
	s := &metrics.Setup{Wiring: sp.wiring, NominalV: 230, ILA: sp.ila, Neutral: -1,
		VIdx: [3]int{-1, -1, -1}, IIdx: [3]int{-1, -1, -1}}
	if sp.orders == nil {
		for h := 1; h <= 50; h++ {
			s.Orders = append(s.Orders, h)
		}
		s.AllOrders = true
	} else {
		s.Orders = sp.orders
	}
	for i := 0; i+1 < len(sp.chans); i += 2 {
		code := sp.chans[i : i+2]
		name, ok := chanNames[code]
		if !ok {
			tb.Fatalf("bad channel code %q", code)
		}
		ch := metrics.Channel{Name: name, Kind: metrics.Voltage, Phase: code[1], FullScale: 400}
		if code[0] == 'i' {
			ch.Kind, ch.FullScale = metrics.Current, 200
		}
		s.Channels = append(s.Channels, ch)
	}
	for i, ch := range s.Channels {
		switch {
		case ch.Phase == 'n':
			s.Neutral = i
		case ch.Kind == metrics.Voltage:
			s.VIdx[ch.Phase-'a'] = i
		default:
			s.IIdx[ch.Phase-'a'] = i
		}
	}
	for p := range 3 {
		if s.VIdx[p] >= 0 && s.IIdx[p] >= 0 {
			s.Pairs = append(s.Pairs, metrics.Pair{Phase: byte('a' + p), V: s.VIdx[p], I: s.IIdx[p]})
		}
	}
	return s
}

// hasSeq reports whether metrics would fill SeqV / SeqI for s (record.go:
// "empty unless wye with three voltages (currents)").
func hasSeq(s *metrics.Setup) (v, i bool) {
	if s.Wiring != metrics.Wye {
		return false, false
	}
	return s.VIdx[0] >= 0 && s.VIdx[1] >= 0 && s.VIdx[2] >= 0,
		s.IIdx[0] >= 0 && s.IIdx[1] >= 0 && s.IIdx[2] >= 0
}

// newRecord returns a record shaped for s whose every float is drawn by
// next (called in a fixed order), so tests can check round trips.
func newRecord(s *metrics.Setup, next func() float64) *metrics.Record {
	r := &metrics.Record{
		Interval:  metrics.Int200ms,
		Start:     time.Date(2026, 3, 1, 10, 0, 0, 0, time.UTC),
		DurationS: next(),
		Samples:   2048,
		FreqHz:    next(),
	}
	r.Channels = make([]metrics.ChannelValues, len(s.Channels))
	for i := range r.Channels {
		c := &r.Channels[i]
		c.RMS, c.DC, c.THDPct, c.THDH50Pct, c.TDDPct, c.TDDH50Pct = next(), next(), next(), next(), next(), next()
		c.H = make([]metrics.Harmonic, len(s.Orders))
		for k, h := range s.Orders {
			c.H[k] = metrics.Harmonic{H: h, RMS: next(), Pct: next(), PctIL: next(), PhaseDeg: next()}
		}
	}
	r.Phases = make([]metrics.PhaseValues, len(s.Pairs))
	for k, p := range s.Pairs {
		r.Phases[k] = metrics.PhaseValues{Phase: p.Phase, P: next(), P1: next(), Q1: next(), S: next(), S1: next(),
			SN: next(), DI: next(), DV: next(), SH: next(), PF: next(), DPF: next()}
	}
	r.Total = metrics.TotalValues{P: next(), Q1: next(), S: next(), Se: next(), Se1: next(), Ve: next(),
		Ie: next(), PF: next(), DPF: next()}
	sv, si := hasSeq(s)
	mk := func() []metrics.Seq {
		q := make([]metrics.Seq, len(s.Orders))
		for k, h := range s.Orders {
			q[k] = metrics.Seq{H: h, Pos: next(), Neg: next(), Zero: next()}
		}
		return q
	}
	if sv {
		r.SeqV = mk()
	}
	if si {
		r.SeqI = mk()
	}
	r.UnbV, r.UnbI = next(), next()
	return r
}

// seqFloats returns a generator of 1, 2, 3, ...: distinct, exact values.
func seqFloats() func() float64 {
	n := 0.0
	return func() float64 { n++; return n }
}

// randFloats returns a generator of random finite float64 values spread
// over many magnitudes (fixed PCG seed), the kind that expose rounding.
func randFloats(seed uint64) func() float64 {
	rng := rand.New(rand.NewPCG(seed, seed^0x9e3779b97f4a7c15))
	return func() float64 {
		for {
			v := math.Float64frombits(rng.Uint64())
			if !math.IsNaN(v) && !math.IsInf(v, 0) {
				return v
			}
		}
	}
}

// Test setups (North Weir DC-2 style: four-wire wye with a neutral CT).
var (
	specWyeAll = setupSpec{chans: "vavbvciaibicin", ila: 160, wiring: metrics.Wye}
	specWyeSub = setupSpec{chans: "vavbvciaibic", orders: []int{1, 5, 7}, wiring: metrics.Wye}
	specSingle = setupSpec{chans: "vaia", orders: []int{1, 3, 5}, ila: 160, wiring: metrics.SinglePhase}
	specVOnly  = setupSpec{chans: "vavbvc", orders: []int{1, 5}, wiring: metrics.Wye}
	specIOnlyA = setupSpec{chans: "vaiaibic", orders: []int{1, 5}, ila: 160, wiring: metrics.Wye}
)
