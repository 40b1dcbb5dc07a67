package summary

import (
	"math"
	"strconv"
	"time"

	"github.com/gridloupe/gridloupe/metrics"
	"github.com/gridloupe/gridloupe/stream/encode"
)

// Figures of one phase (or of the total).
type Figures struct {
	Label    string  // "a", "b", "c" or "total"
	V, I     float64 // V and A RMS; the total: IEEE 1459 ve_v and ie_a
	P, Q1    float64 // W, var (Q1 signed, + inductive)
	PF, DPF  float64 // with the sign of P
	VDist    float64 // voltage THD, %; null for the total
	IDist    float64 // current TDD (THD without il_a), %; null for the total
	LeadLag  string  // "lag" (Q1 > 0), "lead" (Q1 < 0) or "" (Q1 zero or null)
	hasDist  bool
	distKeyV string
	distKeyI string
}

// Summary is the slim view of one record.
type Summary struct {
	Interval metrics.Interval
	End      time.Time
	Flags    metrics.Flags
	FreqHz   float64
	Phases   []Figures // one per phase pair (none for delta wiring)
	Total    Figures
	UnbV     float64 // %; null when not three-phase
	UnbI     float64
	HasUnb   bool
}

// leadLag reads lead or lag from the sign of Q1 (DESIGN: lead/lag is read
// from the sign of Q1).
func leadLag(q1 float64) string {
	switch {
	case metrics.IsNull(q1) || q1 == 0:
		return ""
	case q1 > 0:
		return "lag"
	}
	return "lead"
}

// distKeys are the keys of the distortion figures: the orders 2-50 values
// (what IEEE 519 limits) when computed, else the all-components ones; TDD
// with il_a, else the current's THD.
func distKeys(s *metrics.Setup) (v, i string) {
	v, i = "v_thd_h50_pct", "i_tdd_h50_pct"
	if s.ILA == 0 {
		i = "i_thd_h50_pct"
	}
	if !s.AllOrders {
		v, i = "v_thd_pct", "i_tdd_pct"
		if s.ILA == 0 {
			i = "i_thd_pct"
		}
	}
	return v, i
}

// From builds the summary of record r described by s.
func From(s *metrics.Setup, r *metrics.Record) Summary {
	out := Summary{Interval: r.Interval, Flags: r.Flags, FreqHz: r.FreqHz,
		End: r.Start.Add(time.Duration(r.DurationS * float64(time.Second)))}
	kv, ki := distKeys(s)
	for k, p := range s.Pairs {
		if k >= len(r.Phases) {
			break
		}
		v, c, ph := &r.Channels[p.V], &r.Channels[p.I], &r.Phases[k]
		f := Figures{Label: string(p.Phase), V: v.RMS, I: c.RMS, P: ph.P, Q1: ph.Q1, PF: ph.PF, DPF: ph.DPF,
			LeadLag: leadLag(ph.Q1), hasDist: true, distKeyV: kv, distKeyI: ki}
		switch {
		case s.AllOrders && s.ILA > 0:
			f.VDist, f.IDist = v.THDH50Pct, c.TDDH50Pct
		case s.AllOrders:
			f.VDist, f.IDist = v.THDH50Pct, c.THDH50Pct
		case s.ILA > 0:
			f.VDist, f.IDist = v.THDPct, c.TDDPct
		default:
			f.VDist, f.IDist = v.THDPct, c.THDPct
		}
		out.Phases = append(out.Phases, f)
	}
	t := &r.Total
	out.Total = Figures{Label: "total", V: t.Ve, I: t.Ie, P: t.P, Q1: t.Q1, PF: t.PF, DPF: t.DPF, LeadLag: leadLag(t.Q1)}
	if s.Wiring != metrics.SinglePhase && (r.SeqV != nil || r.SeqI != nil) {
		out.HasUnb, out.UnbV, out.UnbI = true, r.UnbV, r.UnbI
	}
	return out
}

// Resolutions of the published figures, in decimals: enough for a trend
// and for a BMS point (common practice, no source), few enough that the
// message stays under 1 KB.
const (
	decV    = 1 // 0.1 V
	decI    = 2 // 0.01 A
	decPow  = 0 // 1 W, 1 var
	decPF   = 4 // 0.0001
	decPct  = 2 // 0.01 %
	decFreq = 3 // 1 mHz
)

// AppendJSON appends the summary as one JSON object with the site and
// gateway names first (the publisher adds "seq"). Numbers are rounded to
// the resolutions above; a null value is null.
func (x Summary) AppendJSON(dst []byte, site, gw string) []byte {
	dst = append(dst, `{"site":`...)
	dst = encode.AppendString(dst, site)
	dst = append(dst, `,"gateway":`...)
	dst = encode.AppendString(dst, gw)
	dst = append(dst, `,"interval":"`...)
	dst = append(dst, x.Interval.String()...)
	dst = append(dst, `","end":"`...)
	dst = encode.AppendTime(dst, x.End)
	dst = append(dst, `","flags":[`...)
	var nb [16]string
	for k, n := range x.Flags.AppendNames(nb[:0]) {
		if k > 0 {
			dst = append(dst, ',')
		}
		dst = encode.AppendString(dst, n)
	}
	dst = append(dst, `],"freq_hz":`...)
	dst = appendRound(dst, x.FreqHz, decFreq)
	if len(x.Phases) > 0 {
		dst = append(dst, `,"phases":{`...)
		for k := range x.Phases {
			if k > 0 {
				dst = append(dst, ',')
			}
			dst = x.Phases[k].appendJSON(dst)
		}
		dst = append(dst, '}')
	}
	dst = append(dst, ',')
	dst = x.Total.appendJSON(dst)
	if x.HasUnb {
		dst = append(dst, `,"unbalance":{"voltage_pct":`...)
		dst = appendRound(dst, x.UnbV, decPct)
		dst = append(dst, `,"current_pct":`...)
		dst = appendRound(dst, x.UnbI, decPct)
		dst = append(dst, '}')
	}
	return append(dst, '}')
}

// appendJSON appends `"label":{…}`.
func (f *Figures) appendJSON(dst []byte) []byte {
	dst = encode.AppendString(dst, f.Label)
	dst = append(dst, `:{"v_v":`...)
	dst = appendRound(dst, f.V, decV)
	dst = append(dst, `,"i_a":`...)
	dst = appendRound(dst, f.I, decI)
	dst = append(dst, `,"p_w":`...)
	dst = appendRound(dst, f.P, decPow)
	dst = append(dst, `,"q_var":`...)
	dst = appendRound(dst, f.Q1, decPow)
	dst = append(dst, `,"pf":`...)
	dst = appendRound(dst, f.PF, decPF)
	dst = append(dst, `,"dpf":`...)
	dst = appendRound(dst, f.DPF, decPF)
	if f.hasDist {
		dst = append(dst, ',')
		dst = encode.AppendString(dst, f.distKeyV)
		dst = append(dst, ':')
		dst = appendRound(dst, f.VDist, decPct)
		dst = append(dst, ',')
		dst = encode.AppendString(dst, f.distKeyI)
		dst = append(dst, ':')
		dst = appendRound(dst, f.IDist, decPct)
	}
	dst = append(dst, `,"lead_lag":`...)
	if f.LeadLag == "" {
		dst = append(dst, "null"...)
	} else {
		dst = encode.AppendString(dst, f.LeadLag)
	}
	return append(dst, '}')
}

// appendRound appends v rounded to dec decimals with trailing zeros
// trimmed (shortest text of the rounded value), or null.
func appendRound(dst []byte, v float64, dec int) []byte {
	if metrics.IsNull(v) || math.IsInf(v, 0) {
		return append(dst, "null"...)
	}
	p := math.Pow10(dec)
	r := math.Round(v*p) / p
	if r == 0 {
		r = 0 // no -0
	}
	return strconv.AppendFloat(dst, r, 'f', -1, 64)
}
