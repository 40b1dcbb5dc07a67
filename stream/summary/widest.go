package summary

import (
	"time"

	"github.com/gridloupe/gridloupe/metrics"
)

// MaxBytes is the bound of one summary message (DESIGN "Field contract":
// under 1 KB), "seq" included.
const MaxBytes = 1024

// SeqBytes is the most the publisher adds for "seq" (27 bytes):
// `"seq":18446744073709551615,`.
const SeqBytes = 27

// Widest returns the size in bytes, "seq" included, of the largest summary
// setup s can give with the circuits at pick (nil = all) and these site
// and gateway names: every figure at the widest a low-voltage cabinet
// gives and far beyond (voltages −9999.9 V, currents −9999.99 A, powers
// −98765432 W, power factors −0.9999, percentages −999.99 %, 69.999 Hz;
// common practice, no source), every flag set. The gateway checks it
// against MaxBytes before it publishes.
func Widest(s *metrics.Setup, pick []int, site, gw string) int {
	r := metrics.NewRecord(s)
	r.Interval, r.Start, r.DurationS = metrics.Int10min, time.Date(2026, 3, 1, 10, 0, 0, 0, time.UTC), 600
	r.Flags = ^metrics.Flags(0)
	widest(s, r)
	for k, c := range r.Circuits {
		if c.Rec != nil {
			widest(s.Circuits[k].Sub, c.Rec)
		}
	}
	return SeqBytes + len(FromCircuits(s, r, pick).AppendJSON(nil, site, gw))
}

// widest sets every figure of r to its widest text.
func widest(s *metrics.Setup, r *metrics.Record) {
	const v, i, pw, pf, pct, f = -9999.94321, -9999.994321, -98765432.1, -0.99994321, -999.994321, 69.99943
	for k := range r.Channels {
		c := &r.Channels[k]
		c.RMS = i
		if k < len(s.Channels) && s.Channels[k].Kind == metrics.Voltage {
			c.RMS = v
		}
		c.THDPct, c.THDH50Pct, c.TDDPct, c.TDDH50Pct = pct, pct, pct, pct
	}
	for k := range r.Phases {
		p := &r.Phases[k]
		p.P, p.Q1, p.PF, p.DPF = pw, pw, pf, pf // Q1 < 0: lead, the longer word
	}
	t := &r.Total
	t.P, t.Q1, t.Se, t.PF, t.DPF, t.Ve, t.Ie = pw, pw, pw, pf, pf, v, i
	r.FreqHz, r.UnbV, r.UnbI = f, pct, pct
}
