package alarm

import (
	"math"
	"testing"
	"time"

	"github.com/gridloupe/gridloupe/metrics"
)

// Channel indices of the North Weir setup built by northWeir.
const (
	chVA = iota
	chVB
	chVC
	chIA
	chIB
	chIC
)

// t0 is the base time of the test records (DESIGN.md "Time": the default
// replay base is 1970-01-01T00:00:00Z; any fixed time works).
var t0 = time.Date(2026, 3, 1, 10, 0, 0, 0, time.UTC)

// northWeir returns the DESIGN.md demo setup: North Weir pumping station,
// cabinet DC-2, 230/400 V wye, IL 160 A, orders 1..50 (or only orders when
// given).
func northWeir(tb testing.TB, orders ...int) *metrics.Setup {
	tb.Helper()
	if len(orders) == 0 {
		for h := 1; h <= metrics.MaxOrder; h++ {
			orders = append(orders, h)
		}
	}
	s, err := metrics.NewSetup(metrics.Setup{
		Channels: []metrics.Channel{
			{Name: "va", Kind: metrics.Voltage, Phase: 'a'},
			{Name: "vb", Kind: metrics.Voltage, Phase: 'b'},
			{Name: "vc", Kind: metrics.Voltage, Phase: 'c'},
			{Name: "ia", Kind: metrics.Current, Phase: 'a'},
			{Name: "ib", Kind: metrics.Current, Phase: 'b'},
			{Name: "ic", Kind: metrics.Current, Phase: 'c'},
		},
		Orders:    orders,
		Wiring:    metrics.Wye,
		NominalV:  230,
		ILA:       160,
		Reference: -1,
	})
	if err != nil {
		tb.Fatalf("NewSetup: %v", err)
	}
	return s
}

// series builds n records of level iv, each durS seconds long and gapless
// from t0, with every current channel at loadA amperes RMS.
func series(s *metrics.Setup, iv metrics.Interval, durS float64, n int, loadA float64) []*metrics.Record {
	out := make([]*metrics.Record, n)
	for k := range out {
		r := metrics.NewRecord(s)
		r.Interval = iv
		r.Start = t0.Add(time.Duration(math.Round(float64(k) * durS * 1e9)))
		r.DurationS = durS
		for i, c := range s.Channels {
			if c.Kind == metrics.Current {
				r.Channels[i].RMS = loadA
			}
		}
		out[k] = r
	}
	return out
}

// put writes v where rule ru reads its metric in r.
func put(tb testing.TB, s *metrics.Setup, r *metrics.Record, ru Rule, v float64) {
	tb.Helper()
	ch := ru.Target.Channel
	switch ru.Metric {
	case MetricRMS:
		r.Channels[ch].RMS = v
	case MetricTHD:
		r.Channels[ch].THDPct = v
	case MetricTHDH50:
		r.Channels[ch].THDH50Pct = v
	case MetricTDD:
		r.Channels[ch].TDDPct = v
	case MetricTDDH50:
		r.Channels[ch].TDDH50Pct = v
	case "crest_factor":
		r.Channels[ch].CrestFactor = v
	case MetricPct, MetricPctIL:
		for k, h := range s.Orders {
			if h == ru.Harmonic && ru.Metric == MetricPct {
				r.Channels[ch].H[k].Pct = v
			} else if h == ru.Harmonic {
				r.Channels[ch].H[k].PctIL = v
			}
		}
	case MetricPF, MetricDPF:
		if ru.Target.Total {
			r.Total.PF, r.Total.DPF = v, v
			return
		}
		for k := range r.Phases {
			if r.Phases[k].Phase == ru.Target.Phase {
				r.Phases[k].PF, r.Phases[k].DPF = v, v
			}
		}
	case MetricFreq:
		r.FreqHz = v
	case MetricUnbalanceV:
		r.UnbV = v
	case MetricUnbalanceI:
		r.UnbI = v
	default:
		tb.Fatalf("put: metric %q", ru.Metric)
	}
}

// nan is a null value in a test series.
var nan = math.NaN()
