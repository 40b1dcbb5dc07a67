package energy

import (
	"math"
	"testing"
	"time"

	"github.com/gridloupe/gridloupe/metrics"
)

// tol: sums of a few thousand float64 terms (common practice, no source).
const tol = 1e-9

func near(a, b float64) bool { return math.Abs(a-b) <= tol*math.Max(1, math.Abs(b)) }

func TestCountersAdd(t *testing.T) {
	cases := []struct {
		name    string
		p, q, s float64
		want    Counters
		src     string
	}{
		{"import, lagging", 30990, 6570, 3600, Counters{ImportWh: 30990, VarhQ: [4]float64{6570, 0, 0, 0}},
			"closed form: E = P·t; one hour of 30.99 kW is 30.99 kWh"},
		{"import, leading", 1500, -400, 1.8, Counters{ImportWh: 0.75, VarhQ: [4]float64{0, 0, 0, 0.2}},
			"closed form: 1.5 kW for 1.8 s = 0.75 Wh; Q < 0 with P ≥ 0 is quadrant 4"},
		{"export", -2000, 500, 7.2, Counters{ExportWh: 4, VarhQ: [4]float64{0, 1, 0, 0}},
			"closed form: 2 kW fed back for 7.2 s = 4 Wh; P < 0, Q ≥ 0 is quadrant 2"},
		{"export, leading", -2000, -500, 7.2, Counters{ExportWh: 4, VarhQ: [4]float64{0, 0, 1, 0}}, "quadrant 3"},
		{"null P", math.NaN(), 500, 3, Counters{}, "DESIGN.md: a null value is undefined; nothing is guessed"},
		{"null Q", 3600, math.NaN(), 1, Counters{ImportWh: 1}, "closed form: 3.6 kW for 1 s = 1 Wh"},
	}
	for _, tc := range cases {
		var c Counters
		c.Add(tc.p, tc.q, tc.s)
		ok := near(c.ImportWh, tc.want.ImportWh) && near(c.ExportWh, tc.want.ExportWh)
		for i := range c.VarhQ {
			ok = ok && near(c.VarhQ[i], tc.want.VarhQ[i])
		}
		if !ok {
			t.Errorf("%s: %+v, want %+v (src: %s)", tc.name, c, tc.want, tc.src)
		}
	}
}

func TestMeterPerWindow(t *testing.T) {
	// 50 windows of 0.19992 s (10 cycles at 50.02 Hz) alternating between
	// +10 kW and −4 kW: a 3 s mean would net them; per-window integration
	// keeps import and export apart.
	s := setup(t)
	m := NewMeter(nil, []Reading{{Circuit: DefaultCircuit, Counters: Counters{ImportWh: 1000}}})
	r := metrics.NewRecord(s)
	const dur = 10 / 50.02
	for i := range 50 {
		r.DurationS, r.Total.P, r.Total.Q1 = dur, 10000, 2000
		if i%2 == 1 {
			r.Total.P, r.Total.Q1 = -4000, -1000
		}
		m.Window(r)
	}
	got := m.Readings()[0]
	wantImp := 1000 + 25*10000*dur/3600 // restored counter plus 25 windows: closed form E = P·t
	wantExp := 25 * 4000 * dur / 3600
	if got.Circuit != DefaultCircuit || !near(got.ImportWh, wantImp) || !near(got.ExportWh, wantExp) ||
		!near(got.VarhQ[Q1], 25*2000*dur/3600) || !near(got.VarhQ[Q3], 25*1000*dur/3600) {
		t.Errorf("reading %+v, want import %v Wh, export %v Wh (closed form: E = Σ P·Δt per window)", got, wantImp, wantExp)
	}
}

func TestMeterPerCircuit(t *testing.T) {
	// Two drives on one bus, one drawing and one feeding back: each
	// circuit's counters take its own totals, a restored circuit resumes,
	// and a circuit missing from a record adds nothing.
	m := NewMeter([]string{"pump1", "pump2"}, []Reading{{Circuit: "pump2", Counters: Counters{ExportWh: 50}}})
	const dur = 12 / 59.95 // 12 cycles at 59.95 Hz
	circ := func(p, q float64) *metrics.Record {
		return &metrics.Record{Total: metrics.TotalValues{P: p, Q1: q}}
	}
	r := &metrics.Record{DurationS: dur, Total: metrics.TotalValues{P: math.NaN(), Q1: math.NaN()}}
	for range 40 {
		r.Circuits = []metrics.CircuitValues{{Name: "pump1", Rec: circ(30000, 9000)}, {Name: "pump2", Rec: circ(-7500, -1200)}}
		m.Window(r)
	}
	r.Circuits = []metrics.CircuitValues{{Name: "pump1", Rec: circ(30000, 9000)}}
	m.Window(r)
	got := m.Readings()
	cases := []struct {
		name     string
		got      Counters
		imp, exp float64
		q        [4]float64
		src      string
	}{
		{"pump1", got[0].Counters, 41 * 30000 * dur / 3600, 0, [4]float64{41 * 9000 * dur / 3600, 0, 0, 0},
			"closed form: E = Σ P·Δt over 41 windows; P ≥ 0, Q ≥ 0 is quadrant 1"},
		{"pump2", got[1].Counters, 0, 50 + 40*7500*dur/3600, [4]float64{0, 0, 40 * 1200 * dur / 3600, 0},
			"closed form: restored 50 Wh plus 40 windows fed back; P < 0, Q < 0 is quadrant 3"},
	}
	for i, tc := range cases {
		ok := got[i].Circuit == tc.name && near(tc.got.ImportWh, tc.imp) && near(tc.got.ExportWh, tc.exp)
		for k := range tc.q {
			ok = ok && near(tc.got.VarhQ[k], tc.q[k])
		}
		if !ok {
			t.Errorf("%s: %+v, want import %v export %v varh %v (src: %s)", tc.name, got[i], tc.imp, tc.exp, tc.q, tc.src)
		}
	}
}

func setup(t testing.TB) *metrics.Setup {
	t.Helper()
	s, err := metrics.NewSetup(metrics.Setup{
		Channels: []metrics.Channel{
			{Name: "va", Kind: metrics.Voltage, Phase: 'a'}, {Name: "vb", Kind: metrics.Voltage, Phase: 'b'}, {Name: "vc", Kind: metrics.Voltage, Phase: 'c'},
			{Name: "ia", Kind: metrics.Current, Phase: 'a'}, {Name: "ib", Kind: metrics.Current, Phase: 'b'}, {Name: "ic", Kind: metrics.Current, Phase: 'c'}},
		Orders: []int{1, 5, 7}, Wiring: metrics.Wye, NominalV: 230, ILA: 160})
	if err != nil {
		t.Fatal(err)
	}
	return s
}

// feed gives d 3 s records from start for n seconds with phase currents
// from amps(t) and total power 1000·I_a.
func feed(d *Demander, s *metrics.Setup, start time.Time, seconds int, amps func(t time.Time) float64) {
	r := metrics.NewRecord(s)
	r.Interval, r.DurationS = metrics.Int3s, 3
	for k := 0; k < seconds/3; k++ {
		r.Start = start.Add(time.Duration(3*k) * time.Second)
		a := amps(r.Start)
		for ci := 3; ci < 6; ci++ {
			r.Channels[ci].RMS = a * (1 + 0.01*float64(ci-3))
		}
		r.Total.P = 1000 * a
		d.Add(r)
	}
}

func TestFixedDemand(t *testing.T) {
	s := setup(t)
	d, err := NewDemander(s, 15*time.Minute, Fixed, nil)
	if err != nil {
		t.Fatal(err)
	}
	t0 := time.Date(2026, 3, 1, 10, 0, 0, 0, time.UTC)
	// Block 10:00-10:15 at 100 A for its first 5 min, 130 A after:
	// mean (5·100 + 10·130)/15 = 120 A (closed form, time-weighted mean).
	feed(d, s, t0, 15*60, func(t time.Time) float64 {
		if t.Before(t0.Add(5 * time.Minute)) {
			return 100
		}
		return 130
	})
	if dm := d.Demand(); !math.IsNaN(dm.A[0]) {
		t.Errorf("demand before the block closed = %v, want none yet", dm.A)
	}
	feed(d, s, t0.Add(15*time.Minute), 15*60, func(time.Time) float64 { return 80.5 })
	dm := d.Demand()
	if !near(dm.A[0], 120) || !near(dm.A[2], 120*1.02) || !near(dm.W, 120000) || !dm.End.Equal(t0.Add(15*time.Minute)) {
		t.Errorf("first block demand %+v, want 120 A on a, 122.4 A on c, 120 kW, ending 10:15 (closed form)", dm)
	}
	feed(d, s, t0.Add(30*time.Minute), 3, func(time.Time) float64 { return 0 }) // closes block 2
	dm = d.Demand()
	if !near(dm.A[0], 80.5) || !near(dm.Month.MaxA[0], 120) || dm.Month.Month != "2026-03" {
		t.Errorf("second block %+v, want 80.5 A and the month's maximum still 120 A", dm)
	}
}

func TestDemandFirstCircuit(t *testing.T) {
	// A bus with an incomer and one drive (README Energy and demand: with
	// circuits the demand is the first circuit's): the incomer's phase
	// currents and total power count, not the drive's, and never their sum.
	s, err := metrics.NewSetup(metrics.Setup{
		Channels: []metrics.Channel{
			{Name: "va", Kind: metrics.Voltage, Phase: 'a'}, {Name: "vb", Kind: metrics.Voltage, Phase: 'b'}, {Name: "vc", Kind: metrics.Voltage, Phase: 'c'},
			{Name: "ia", Kind: metrics.Current, Phase: 'a'}, {Name: "ib", Kind: metrics.Current, Phase: 'b'}, {Name: "ic", Kind: metrics.Current, Phase: 'c'},
			{Name: "da", Kind: metrics.Current, Phase: 'a'}, {Name: "db", Kind: metrics.Current, Phase: 'b'}, {Name: "dc", Kind: metrics.Current, Phase: 'c'}},
		Orders: []int{1, 5, 7}, Wiring: metrics.Wye, NominalV: 230, ILA: 320,
		Circuits: []metrics.Circuit{{Name: "incomer", Currents: []int{3, 4, 5}}, {Name: "drive", Currents: []int{6, 7, 8}}}})
	if err != nil {
		t.Fatal(err)
	}
	d, err := NewDemander(s, 15*time.Minute, Fixed, nil)
	if err != nil {
		t.Fatal(err)
	}
	r := metrics.NewRecord(s)
	r.Interval, r.DurationS = metrics.Int3s, 3
	t0 := time.Date(2026, 3, 1, 10, 0, 0, 0, time.UTC)
	for k := range 301 { // 15 min of 3 s values, then one that closes the block
		r.Start = t0.Add(time.Duration(3*k) * time.Second)
		for ci := 3; ci < 9; ci++ {
			r.Channels[ci].RMS = 150 - 100*float64(ci/6) // incomer 150 A, drive 50 A
		}
		r.Total.P = math.NaN() // a bus has no single total
		r.Circuits[0].Rec.Total.P, r.Circuits[1].Rec.Total.P = 100000, 33000
		d.Add(r)
	}
	dm := d.Demand()
	if !near(dm.A[0], 150) || !near(dm.A[2], 150) || !near(dm.W, 100000) {
		t.Errorf("demand %+v, want the incomer's 150 A per phase and 100 kW (closed form: constant over the block)", dm)
	}
}

func TestSlidingDemand(t *testing.T) {
	s := setup(t)
	d, err := NewDemander(s, 5*time.Minute, Sliding, nil)
	if err != nil {
		t.Fatal(err)
	}
	t0 := time.Date(2026, 3, 31, 23, 50, 0, 0, time.UTC)
	feed(d, s, t0, 4*60, func(time.Time) float64 { return 50 })
	if dm := d.Demand(); !math.IsNaN(dm.A[0]) {
		t.Errorf("sliding demand after 4 of 5 min = %v, want none (under 90 %% covered)", dm.A[0])
	}
	// Ten minutes at 50 A then a step to 110 A for 60 s: the last 5 min
	// average is (240·50 + 60·110)/300 = 62 A (closed form).
	feed(d, s, t0.Add(4*time.Minute), 6*60, func(time.Time) float64 { return 50 })
	feed(d, s, t0.Add(10*time.Minute), 60, func(time.Time) float64 { return 110 })
	dm := d.Demand()
	if !near(dm.A[0], 62) || dm.Month.Month != "2026-04" {
		t.Errorf("sliding demand %v in month %q, want 62 A in 2026-04 (the value ending at 00:01 belongs to April)", dm.A[0], dm.Month.Month)
	}
	ms := d.Months()
	if len(ms) != 2 || ms[0].Month != "2026-03" || !near(ms[0].MaxA[0], 50) {
		t.Errorf("months %+v, want March at 50 A and April", ms)
	}
}

func TestEstimateIL(t *testing.T) {
	mo := func(name string, a ...float64) Month {
		m := Month{Month: name, MaxA: [3]float64{math.NaN(), math.NaN(), math.NaN()}}
		copy(m.MaxA[:], a)
		return m
	}
	now := time.Date(2026, 4, 10, 0, 0, 0, 0, time.UTC)
	// IEEE 519-2014 IL (REFERENCE.md §1.2, from memory): the average of the
	// monthly maximum demand currents. Worked example recomputed: months
	// with largest phases 152, 168 and 160.3 A average to 160.1 A.
	il := EstimateIL([]Month{mo("2026-02", 150, 168, 160), mo("2026-01", 152, 151), mo("2026-03", 160.3), mo("2026-04", 400)}, now, 15*time.Minute)
	if !near(il.A, (152+168+160.3)/3) || il.Months != 3 {
		t.Errorf("IL = %+v, want 160.1 A over 3 months (the month in progress left out)", il)
	}
	many := make([]Month, 0, 14)
	for i := range 14 {
		many = append(many, mo(time.Date(2025, time.Month(1+i), 1, 0, 0, 0, 0, time.UTC).Format("2006-01"), float64(100+i)))
	}
	il = EstimateIL(many, time.Date(2026, 4, 1, 0, 0, 0, 0, time.UTC), 15*time.Minute)
	if il.Months != 12 || !near(il.A, 107.5) {
		t.Errorf("IL over 14 months = %+v, want the newest 12 (102..113 A, mean 107.5)", il)
	}
	if il := EstimateIL([]Month{mo("2026-04", 90)}, now, 15*time.Minute); !near(il.A, 90) || il.Basis == "" {
		t.Errorf("only the month in progress: %+v, want 90 A stated as a lower bound", il)
	}
	if il := EstimateIL(nil, now, 15*time.Minute); !math.IsNaN(il.A) {
		t.Errorf("no months: %+v, want NaN", il)
	}
}
