package compliance

import (
	"math/rand/v2"
	"testing"
	"time"

	"github.com/gridloupe/gridloupe/metrics"
)

// weekStart is an invented week (North Weir pumping station, cabinet DC-2).
var weekStart = time.Date(2026, 3, 2, 0, 0, 0, 0, time.UTC)

// North Weir values (DESIGN.md scenario): 230 V phase-to-neutral, 400 V
// bus, IL 160 A, ISC 6.1 kA.
const (
	nwNominalV = 230.0
	nwBusV     = 400.0
	nwIL       = 160.0
	nwIsc      = 6100.0
)

// newSetup returns a validated setup: voltages and currents on the given
// phases (e.g. "a" or "abc"), all orders 1..50 unless orders is given.
func newSetup(tb testing.TB, phases string, ila float64, orders ...int) *metrics.Setup {
	tb.Helper()
	if orders == nil {
		for h := 1; h <= metrics.MaxOrder; h++ {
			orders = append(orders, h)
		}
	}
	s := metrics.Setup{Orders: orders, Wiring: metrics.Wye, NominalV: nwNominalV, ILA: ila, Reference: -1}
	if len(phases) == 1 {
		s.Wiring = metrics.SinglePhase
	}
	for _, p := range []byte(phases) {
		s.Channels = append(s.Channels, metrics.Channel{Name: "v" + string(p), Kind: metrics.Voltage, Phase: p})
	}
	for _, p := range []byte(phases) {
		s.Channels = append(s.Channels, metrics.Channel{Name: "i" + string(p), Kind: metrics.Current, Phase: p})
	}
	out, err := metrics.NewSetup(s)
	if err != nil {
		tb.Fatal(err)
	}
	return out
}

func newEval(tb testing.TB, s *metrics.Setup) *Evaluator {
	tb.Helper()
	e, err := New(Config{Setup: s, NominalV: nwNominalV, BusV: nwBusV, IL: nwIL, Isc: nwIsc, Start: weekStart})
	if err != nil {
		tb.Fatal(err)
	}
	return e
}

// Baseline levels of the synthetic week, percent, all below every
// threshold of the North Weir rows (Table 1 ≤ 1 kV: 5 / 8; Table 2 20<50:
// TDD 8, 3..<11 7, 11..<17 3.5, 17..<23 2.5, 23..<35 1, 35..50 0.5; even
// 25 % of those) with the ±jitter applied.
const (
	baseVTHD  = 4.0  // % of fundamental
	baseVH5   = 3.0  // % of nominal
	baseVHx   = 0.3  // other voltage orders, % of nominal
	baseITDD  = 6.0  // % of IL
	baseIH5   = 5.0  // % of IL
	baseIH7   = 3.0  // % of IL
	baseIHx   = 0.05 // other current orders, % of IL (below the strictest even limit 0.125)
	jitterRel = 0.1  // relative ±jitter on the h5 and THD/TDD values
)

// synth fills records of a synthetic week. Records are reused: the
// callback must not keep them.
type synth struct {
	s   *metrics.Setup
	rng *rand.Rand
	r   *metrics.Record
}

func newSynth(s *metrics.Setup) *synth {
	sy := &synth{s: s, rng: rand.New(rand.NewPCG(519, 2014)), r: metrics.NewRecord(s)}
	for i, c := range s.Channels {
		ch := &sy.r.Channels[i]
		for j := range ch.H {
			h := ch.H[j].H
			switch {
			case c.Kind == metrics.Voltage && h == 1:
				ch.H[j].RMS = nwNominalV
			case c.Kind == metrics.Voltage:
				ch.H[j].RMS = baseVHx / 100 * nwNominalV
			case h == 1:
				ch.H[j].RMS = 0.8 * nwIL
			case h == 7:
				ch.H[j].RMS = baseIH7 / 100 * nwIL
			default:
				ch.H[j].RMS = baseIHx / 100 * nwIL
			}
		}
	}
	return sy
}

// fill sets the record's interval, start and jittered values.
func (sy *synth) fill(iv metrics.Interval, start time.Time) *metrics.Record {
	r := sy.r
	r.Interval, r.Start, r.Flags = iv, start, 0
	for i, c := range sy.s.Channels {
		ch := &r.Channels[i]
		j := 1 + sy.rng.Float64()*2*jitterRel - jitterRel
		h5 := -1
		for k := range ch.H {
			if ch.H[k].H == 5 {
				h5 = k
			}
		}
		if c.Kind == metrics.Voltage {
			ch.THDH50Pct = baseVTHD * j
			if h5 >= 0 {
				ch.H[h5].RMS = baseVH5 * j / 100 * nwNominalV
			}
			continue
		}
		ch.TDDH50Pct = baseITDD * j * nwIL / sy.s.ILA
		if h5 >= 0 {
			ch.H[h5].RMS = baseIH5 * j / 100 * nwIL
		}
	}
	return r
}

// feedWeek feeds a full-coverage week: every 3 s and 10 min value, in
// order. mod may change a record (keyed by interval, day and index in the
// day) and return false to drop it.
func feedWeek(tb testing.TB, e *Evaluator, sy *synth, mod func(r *metrics.Record, day, i int) bool) {
	tb.Helper()
	for d := range Days {
		for i := range Day3sValues {
			t := weekStart.Add(time.Duration(d)*24*time.Hour + time.Duration(i)*3*time.Second)
			r := sy.fill(metrics.Int3s, t)
			if mod != nil && !mod(r, d, i) {
				continue
			}
			if err := e.Add(r); err != nil {
				tb.Fatal(err)
			}
		}
	}
	for i := range Week10minValues {
		r := sy.fill(metrics.Int10min, weekStart.Add(time.Duration(i)*10*time.Minute))
		if mod != nil && !mod(r, -1, i) {
			continue
		}
		if err := e.Add(r); err != nil {
			tb.Fatal(err)
		}
	}
}

// findLine returns the line of channel, quantity and statistic.
func findLine(tb testing.TB, res *Result, ch, q string, st Statistic) Line {
	tb.Helper()
	for _, l := range res.Lines {
		if l.Channel == ch && l.Quantity == q && l.Statistic == st {
			return l
		}
	}
	tb.Fatalf("no line %s %s %s", ch, q, st)
	return Line{}
}

// failing lists the lines that failed, as "channel quantity statistic".
func failing(res *Result) []string {
	var out []string
	for _, l := range res.Lines {
		if l.Verdict == Fail {
			out = append(out, l.Channel+" "+l.Quantity+" "+l.Statistic.String())
		}
	}
	return out
}
