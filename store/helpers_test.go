package store

import (
	"math"
	"math/rand/v2"
	"path/filepath"
	"testing"
	"time"

	bolt "go.etcd.io/bbolt"

	"github.com/gridloupe/gridloupe/metrics"
)

// Tolerances.
const (
	// relF32 bounds float64→float32→float64: binary32 has a 24-bit significand,
	// so the relative rounding error is at most 2^-24 ≈ 6e-8 (IEEE 754-2008 §3.6).
	relF32 = 1e-6
	// degTol bounds centi-degree rounding: at most 0.005° (0.01° is common practice, no source).
	degTol = 0.01
)

// North Weir pumping station, cabinet DC-2 (invented): 230 V phase-to-neutral,
// IL 160 A; channels va, vb, vc, ia, ib, ic, in and a spare drive current ix.
func setup8(orders []int) *metrics.Setup {
	return &metrics.Setup{
		Channels: []metrics.Channel{
			{Name: "va", Kind: metrics.Voltage, Phase: 'a', FullScale: 400},
			{Name: "vb", Kind: metrics.Voltage, Phase: 'b', FullScale: 400},
			{Name: "vc", Kind: metrics.Voltage, Phase: 'c', FullScale: 400},
			{Name: "ia", Kind: metrics.Current, Phase: 'a', FullScale: 300},
			{Name: "ib", Kind: metrics.Current, Phase: 'b', FullScale: 300},
			{Name: "ic", Kind: metrics.Current, Phase: 'c', FullScale: 300},
			{Name: "in", Kind: metrics.Current, Phase: 'n', FullScale: 300},
			{Name: "ix", Kind: metrics.Current, Phase: 'a', FullScale: 100, DelayS: 12e-6},
		},
		Orders: orders, AllOrders: len(orders) == 50, Wiring: metrics.Wye,
		NominalV: 230, NominalI: 160, ILA: 160,
		Pairs:   []metrics.Pair{{Phase: 'a', V: 0, I: 3}, {Phase: 'b', V: 1, I: 4}, {Phase: 'c', V: 2, I: 5}},
		Neutral: 6, VIdx: [3]int{0, 1, 2}, IIdx: [3]int{3, 4, 5},
	}
}

// Larkfield office tower, AH-4 (invented): one voltage, one current.
func setup1(orders []int) *metrics.Setup {
	return &metrics.Setup{
		Channels: []metrics.Channel{
			{Name: "v1", Kind: metrics.Voltage, Phase: 'a'},
			{Name: "i1", Kind: metrics.Current, Phase: 'a'},
		},
		Orders: orders, Wiring: metrics.SinglePhase, NominalV: 277,
		Pairs: []metrics.Pair{{Phase: 'a', V: 0, I: 1}}, Neutral: -1, VIdx: [3]int{0, -1, -1}, IIdx: [3]int{1, -1, -1},
	}
}

// setupDelta: North Weir DC-2's incomer measured three-wire with two CTs
// (the two-wattmeter hook-up), derived by metrics.NewSetup.
func setupDelta(orders []int) *metrics.Setup {
	s, err := metrics.NewSetup(metrics.Setup{
		Channels: []metrics.Channel{
			{Name: "vab", Kind: metrics.Voltage, Phase: 'a', To: 'b', FullScale: 700},
			{Name: "vcb", Kind: metrics.Voltage, Phase: 'c', To: 'b', FullScale: 700},
			{Name: "ia", Kind: metrics.Current, Phase: 'a', FullScale: 300},
			{Name: "ic", Kind: metrics.Current, Phase: 'c', FullScale: 300},
		},
		Orders: orders, Wiring: metrics.Delta, NominalV: 400, NominalI: 160, ILA: 160, Reference: -1,
	})
	if err != nil {
		panic(err)
	}
	return s
}

// setupV is the smallest layout: one voltage channel, fundamental only.
func setupV() *metrics.Setup {
	return &metrics.Setup{
		Channels: []metrics.Channel{{Name: "va", Kind: metrics.Voltage, Phase: 'a'}},
		Orders:   []int{1}, Wiring: metrics.SinglePhase, NominalV: 230,
		Neutral: -1, VIdx: [3]int{0, -1, -1}, IIdx: [3]int{-1, -1, -1},
	}
}

func allOrders() []int {
	o := make([]int, 50)
	for i := range o {
		o[i] = i + 1
	}
	return o
}

// orders17 is a typical 3 s configuration: 1 plus 16 characteristic orders.
var orders17 = []int{1, 2, 3, 5, 7, 9, 11, 13, 15, 17, 19, 23, 25, 29, 31, 35, 37}

// fillRecord sets every value of r (sized for s) from rng, with some nulls.
// pct and pct_il follow the stored rule so the round trip can compare them.
func fillRecord(r *metrics.Record, s *metrics.Setup, rng *rand.Rand, start time.Time, withSeq bool) {
	val := func() float64 {
		if rng.IntN(20) == 0 {
			return math.NaN()
		}
		return (rng.Float64()*2 - 1) * math.Pow(10, float64(rng.IntN(8)-2))
	}
	r.Interval = metrics.Int3s
	r.Start = start
	r.DurationS = 3.0000390625
	r.Samples = 30720
	r.FreqHz = 49.98 + rng.Float64()*0.04
	r.HasFreq10s = rng.IntN(2) == 0
	r.Freq10sHz = math.NaN()
	if r.HasFreq10s {
		r.Freq10sHz = 50.01
	}
	r.Flags = metrics.Flags(rng.Uint32N(1 << 10))
	for i := range r.Channels {
		c := &r.Channels[i]
		c.RMS, c.DC, c.THDPct, c.THDH50Pct, c.TDDPct, c.TDDH50Pct = val(), val(), val(), val(), val(), val()
		c.CrestFactor = val()
		pctNull := rng.IntN(10) == 0
		h1 := 50 + rng.Float64()*200
		for j := range c.H {
			h := &c.H[j]
			h.H = s.Orders[j]
			h.RMS = h1
			if j > 0 {
				h.RMS = math.Abs(val()) * h1 / 100
			}
			h.PhaseDeg = 360*rng.Float64() - 180 + 1e-9
			if rng.IntN(10) == 0 {
				h.PhaseDeg = math.NaN()
			}
			if j == 1 {
				h.PhaseDeg = 180 // the range's closed end
			}
			h.Pct, h.PctIL = math.NaN(), math.NaN()
			if !pctNull {
				h.Pct = 100 * h.RMS / h1
			}
			if s.Channels[i].Kind == metrics.Current && s.ILA > 0 {
				h.PctIL = 100 * h.RMS / s.ILA
			}
		}
	}
	r.Phases = r.Phases[:0]
	for _, p := range s.Pairs {
		r.Phases = append(r.Phases, metrics.PhaseValues{Phase: p.Phase, P: val(), P1: val(), Q1: val(), S: val(),
			S1: val(), SN: val(), DI: val(), DV: val(), SH: val(), PF: val(), DPF: val()})
	}
	if len(r.Phases) > 0 || s.HasTotal() {
		r.Total = metrics.TotalValues{P: val(), Q1: val(), S: val(), Se: val(), Se1: val(), Ve: val(), Ie: val(), PF: val(), DPF: val(), P1Pos: val(), Q1Pos: val()}
	}
	r.SeqV, r.SeqI = nil, nil
	if withSeq {
		for j, h := range s.Orders {
			r.SeqV = append(r.SeqV, metrics.Seq{H: h, Pos: val(), Neg: val(), Zero: val()})
			if j%2 == 0 {
				r.SeqI = append(r.SeqI, metrics.Seq{H: h, Pos: val(), Neg: val(), Zero: val()})
			} else {
				r.SeqI = append(r.SeqI, metrics.Seq{H: h, Pos: 0, Neg: 1e-3, Zero: 2e5})
			}
		}
	}
	r.UnbV, r.UnbI = val(), val()
}

// smallRecord is a one-channel-pair record with only the fundamental.
func smallRecord(s *metrics.Setup, iv metrics.Interval, start time.Time, tag uint64) *metrics.Record {
	r := newRecord(s)
	r.Interval, r.Start, r.DurationS, r.Samples = iv, start, 3, tag
	r.FreqHz = 60
	for i := range r.Channels {
		r.Channels[i].RMS = 277
		r.Channels[i].H[0] = metrics.Harmonic{H: 1, RMS: 277, Pct: 100, PctIL: math.NaN()}
		for j := 1; j < len(r.Channels[i].H); j++ {
			r.Channels[i].H[j] = metrics.Harmonic{H: s.Orders[j], RMS: 2.77, Pct: 1, PctIL: math.NaN()}
		}
	}
	if len(s.Pairs) > 0 {
		r.Phases = []metrics.PhaseValues{{Phase: 'a', P: 1000, PF: 0.9}}
	}
	r.UnbV, r.UnbI = math.NaN(), math.NaN()
	return r
}

func openTest(tb testing.TB, opts Options) *DB {
	tb.Helper()
	if opts.Path == "" {
		opts.Path = filepath.Join(tb.TempDir(), "gridloupe.db")
	}
	opts.NoSync = true
	db, err := Open(opts)
	if err != nil {
		tb.Fatalf("Open: %v", err)
	}
	tb.Cleanup(func() { _ = db.Close() })
	return db
}

// checkBolt runs bbolt's consistency check (page reachability, freelist).
func checkBolt(tb testing.TB, db *DB) {
	tb.Helper()
	err := db.bdb.View(func(tx *bolt.Tx) error {
		for err := range tx.Check() {
			tb.Errorf("bbolt check: %v", err)
		}
		return nil
	})
	if err != nil {
		tb.Fatal(err)
	}
}

func near(a, b, rel float64) bool {
	if a != a || b != b {
		return a != a && b != b
	}
	return math.Abs(a-b) <= rel*math.Max(math.Abs(a), math.Abs(b))
}

func nearDeg(a, b float64) bool {
	if a != a || b != b {
		return a != a && b != b
	}
	d := math.Mod(a-b+540, 360) - 180
	return math.Abs(d) <= degTol
}

// compareRecords reports every field of got that differs from want beyond the tolerances.
func compareRecords(tb testing.TB, want, got *metrics.Record) {
	tb.Helper()
	f := func(name string, w, g float64) {
		if !near(w, g, relF32) {
			tb.Errorf("%s: got %v, want %v", name, g, w)
		}
	}
	if !got.Start.Equal(want.Start) || got.DurationS != want.DurationS || got.Samples != want.Samples ||
		got.Flags != want.Flags || got.Interval != want.Interval || got.HasFreq10s != want.HasFreq10s {
		tb.Errorf("header: got %v %v %v %v %v %v, want %v %v %v %v %v %v", got.Start, got.DurationS, got.Samples, got.Flags, got.Interval, got.HasFreq10s,
			want.Start, want.DurationS, want.Samples, want.Flags, want.Interval, want.HasFreq10s)
	}
	f("freq", want.FreqHz, got.FreqHz)
	if want.HasFreq10s {
		f("freq10s", want.Freq10sHz, got.Freq10sHz)
	}
	if len(got.Channels) != len(want.Channels) {
		tb.Fatalf("channels: got %d, want %d", len(got.Channels), len(want.Channels))
	}
	for i := range want.Channels {
		w, g := &want.Channels[i], &got.Channels[i]
		f("rms", w.RMS, g.RMS)
		f("dc", w.DC, g.DC)
		f("thd", w.THDPct, g.THDPct)
		f("thd_h50", w.THDH50Pct, g.THDH50Pct)
		f("tdd", w.TDDPct, g.TDDPct)
		f("tdd_h50", w.TDDH50Pct, g.TDDH50Pct)
		f("crest_factor", w.CrestFactor, g.CrestFactor)
		if len(g.H) != len(w.H) {
			tb.Fatalf("channel %d: %d orders, want %d", i, len(g.H), len(w.H))
		}
		for j := range w.H {
			if g.H[j].H != w.H[j].H {
				tb.Errorf("order: got %d, want %d", g.H[j].H, w.H[j].H)
			}
			f("h rms", w.H[j].RMS, g.H[j].RMS)
			f("pct", w.H[j].Pct, g.H[j].Pct)
			f("pct_il", w.H[j].PctIL, g.H[j].PctIL)
			if !nearDeg(w.H[j].PhaseDeg, g.H[j].PhaseDeg) {
				tb.Errorf("ch %d h %d phase: got %v, want %v", i, w.H[j].H, g.H[j].PhaseDeg, w.H[j].PhaseDeg)
			}
		}
	}
	if len(got.Phases) != len(want.Phases) {
		tb.Fatalf("phases: got %d, want %d", len(got.Phases), len(want.Phases))
	}
	for i := range want.Phases {
		w, g := want.Phases[i], got.Phases[i]
		if w.Phase != g.Phase {
			tb.Errorf("phase letter %c, want %c", g.Phase, w.Phase)
		}
		wv := []float64{w.P, w.P1, w.Q1, w.S, w.S1, w.SN, w.DI, w.DV, w.SH, w.PF, w.DPF}
		gv := []float64{g.P, g.P1, g.Q1, g.S, g.S1, g.SN, g.DI, g.DV, g.SH, g.PF, g.DPF}
		for k := range wv {
			f("phase value", wv[k], gv[k])
		}
	}
	if len(want.Phases) > 0 || want.Total != (metrics.TotalValues{}) {
		w, g := want.Total, got.Total
		wv := []float64{w.P, w.Q1, w.S, w.Se, w.Se1, w.Ve, w.Ie, w.PF, w.DPF, w.P1Pos, w.Q1Pos}
		gv := []float64{g.P, g.Q1, g.S, g.Se, g.Se1, g.Ve, g.Ie, g.PF, g.DPF, g.P1Pos, g.Q1Pos}
		for k := range wv {
			f("total value", wv[k], gv[k])
		}
	}
	for k, pair := range [2][2][]metrics.Seq{{want.SeqV, got.SeqV}, {want.SeqI, got.SeqI}} {
		if len(pair[0]) != len(pair[1]) {
			tb.Fatalf("sequence set %d: got %d orders, want %d", k, len(pair[1]), len(pair[0]))
		}
		for j := range pair[0] {
			if pair[0][j].H != pair[1][j].H {
				tb.Errorf("seq order %d, want %d", pair[1][j].H, pair[0][j].H)
			}
			f("pos", pair[0][j].Pos, pair[1][j].Pos)
			f("neg", pair[0][j].Neg, pair[1][j].Neg)
			f("zero", pair[0][j].Zero, pair[1][j].Zero)
		}
	}
	f("unb_v", want.UnbV, got.UnbV)
	f("unb_i", want.UnbI, got.UnbI)
}
