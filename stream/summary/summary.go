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
	voltOnly bool // a bus voltage of a setup with circuits: V and THD-V only
	distKeyV string
	distKeyI string
}

// CircuitFigures are one circuit's figures, for a setup with several
// circuits on one bus.
type CircuitFigures struct {
	Name    string
	P, Q1   float64 // total W, var (Q1 signed, + inductive)
	Se      float64 // IEEE 1459 effective apparent power, VA (PF = P/Se)
	PF, DPF float64 // total, with the sign of P
	IDist   []Dist  // current TDD (THD without the circuit's il_a) per phase current, %
	LeadLag string  // as Figures.LeadLag, from the total Q1
	distKey string
}

// Dist is one phase current's distortion figure.
type Dist struct {
	Phase string // "a", "b" or "c"
	Pct   float64
}

// Summary is the slim view of one record.
type Summary struct {
	Interval metrics.Interval
	End      time.Time
	Flags    metrics.Flags
	FreqHz   float64
	// Phases holds one entry per phase pair (none for delta wiring); with
	// circuits, one per bus voltage channel with only V and THD-V (the
	// currents, powers and totals are the circuits').
	Phases []Figures
	Total  Figures // absent with circuits (the bus has no currents)
	UnbV   float64 // %; null when not three-phase
	UnbI   float64 // %; not published with circuits
	HasUnb bool
	// Circuits, for a setup with several circuits on one bus, in config
	// order; nil otherwise (the message is then as before).
	Circuits []CircuitFigures
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

// currentDist is current channel c's distortion figure as distKeys names it.
func currentDist(s *metrics.Setup, c *metrics.ChannelValues) float64 {
	switch {
	case s.AllOrders && s.ILA > 0:
		return c.TDDH50Pct
	case s.AllOrders:
		return c.THDH50Pct
	case s.ILA > 0:
		return c.TDDPct
	}
	return c.THDPct
}

// voltageDist is voltage channel v's THD as distKeys names it.
func voltageDist(s *metrics.Setup, v *metrics.ChannelValues) float64 {
	if s.AllOrders {
		return v.THDH50Pct
	}
	return v.THDPct
}

// From builds the summary of record r described by s, with every circuit
// of a setup with circuits.
func From(s *metrics.Setup, r *metrics.Record) Summary { return FromCircuits(s, r, nil) }

// FromCircuits is From with only the circuits of s at the indices pick
// (in that order; nil = every circuit). pick is ignored without circuits.
func FromCircuits(s *metrics.Setup, r *metrics.Record, pick []int) Summary {
	out := Summary{Interval: r.Interval, Flags: r.Flags, FreqHz: r.FreqHz,
		End: r.Start.Add(time.Duration(r.DurationS * float64(time.Second)))}
	if len(s.Circuits) > 0 {
		fromCircuits(s, r, pick, &out)
		return out
	}
	kv, ki := distKeys(s)
	for k, p := range s.Pairs {
		if k >= len(r.Phases) {
			break
		}
		v, c, ph := &r.Channels[p.V], &r.Channels[p.I], &r.Phases[k]
		f := Figures{Label: string(p.Phase), V: v.RMS, I: c.RMS, P: ph.P, Q1: ph.Q1, PF: ph.PF, DPF: ph.DPF,
			LeadLag: leadLag(ph.Q1), hasDist: true, distKeyV: kv, distKeyI: ki,
			VDist: voltageDist(s, v), IDist: currentDist(s, c)}
		out.Phases = append(out.Phases, f)
	}
	t := &r.Total
	out.Total = Figures{Label: "total", V: t.Ve, I: t.Ie, P: t.P, Q1: t.Q1, PF: t.PF, DPF: t.DPF, LeadLag: leadLag(t.Q1)}
	if s.Wiring != metrics.SinglePhase && (r.SeqV != nil || r.SeqI != nil) {
		out.HasUnb, out.UnbV, out.UnbI = true, r.UnbV, r.UnbI
	}
	return out
}

// fromCircuits fills out for a setup with circuits: the bus voltages
// (V and THD-V per voltage channel, labelled by phase or line) and the
// voltage unbalance, then per circuit its totals and the distortion of
// each phase current, read from the circuit's own record.
func fromCircuits(s *metrics.Setup, r *metrics.Record, pick []int, out *Summary) {
	kv, _ := distKeys(s)
	for i, ch := range s.Channels {
		if ch.Kind != metrics.Voltage || i >= len(r.Channels) {
			continue
		}
		label := string(ch.Phase)
		if ch.To != 0 {
			label += string(ch.To)
		}
		v := &r.Channels[i]
		out.Phases = append(out.Phases, Figures{Label: label, V: v.RMS, VDist: voltageDist(s, v), distKeyV: kv, voltOnly: true})
	}
	if s.Wiring != metrics.SinglePhase && r.SeqV != nil {
		out.HasUnb, out.UnbV, out.UnbI = true, r.UnbV, metrics.Null()
	}
	if pick == nil {
		pick = make([]int, len(s.Circuits))
		for k := range pick {
			pick[k] = k
		}
	}
	out.Circuits = make([]CircuitFigures, 0, len(pick))
	for _, k := range pick {
		if k < 0 || k >= len(s.Circuits) || k >= len(r.Circuits) || r.Circuits[k].Rec == nil {
			continue
		}
		c := &s.Circuits[k]
		cr := r.Circuits[k].Rec
		_, ki := distKeys(c.Sub)
		t := &cr.Total
		f := CircuitFigures{Name: c.Name, P: t.P, Q1: t.Q1, Se: t.Se, PF: t.PF, DPF: t.DPF, LeadLag: leadLag(t.Q1), distKey: ki}
		for j, ci := range c.Map {
			ch := c.Sub.Channels[j]
			if ch.Kind != metrics.Current || ch.Phase == 'n' || ci >= len(r.Channels) {
				continue
			}
			f.IDist = append(f.IDist, Dist{Phase: string(ch.Phase), Pct: currentDist(c.Sub, &r.Channels[ci])})
		}
		out.Circuits = append(out.Circuits, f)
	}
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
	if x.Circuits == nil {
		dst = append(dst, ',')
		dst = x.Total.appendJSON(dst)
	}
	if x.HasUnb {
		dst = append(dst, `,"unbalance":{"voltage_pct":`...)
		dst = appendRound(dst, x.UnbV, decPct)
		if x.Circuits == nil {
			dst = append(dst, `,"current_pct":`...)
			dst = appendRound(dst, x.UnbI, decPct)
		}
		dst = append(dst, '}')
	}
	if x.Circuits != nil {
		dst = append(dst, `,"circuits":{`...)
		for k := range x.Circuits {
			if k > 0 {
				dst = append(dst, ',')
			}
			dst = x.Circuits[k].appendJSON(dst)
		}
		dst = append(dst, '}')
	}
	return append(dst, '}')
}

// appendJSON appends `"name":{…}`.
func (c *CircuitFigures) appendJSON(dst []byte) []byte {
	dst = encode.AppendString(dst, c.Name)
	dst = append(dst, `:{"p_w":`...)
	dst = appendRound(dst, c.P, decPow)
	dst = append(dst, `,"q_var":`...)
	dst = appendRound(dst, c.Q1, decPow)
	dst = append(dst, `,"se_va":`...)
	dst = appendRound(dst, c.Se, decPow)
	dst = append(dst, `,"pf":`...)
	dst = appendRound(dst, c.PF, decPF)
	dst = append(dst, `,"dpf":`...)
	dst = appendRound(dst, c.DPF, decPF)
	dst = append(dst, ',')
	dst = encode.AppendString(dst, c.distKey)
	dst = append(dst, ":{"...)
	for k, d := range c.IDist {
		if k > 0 {
			dst = append(dst, ',')
		}
		dst = encode.AppendString(dst, d.Phase)
		dst = append(dst, ':')
		dst = appendRound(dst, d.Pct, decPct)
	}
	dst = append(dst, `},"lead_lag":`...)
	dst = appendLeadLag(dst, c.LeadLag)
	return append(dst, '}')
}

func appendLeadLag(dst []byte, ll string) []byte {
	if ll == "" {
		return append(dst, "null"...)
	}
	return encode.AppendString(dst, ll)
}

// appendJSON appends `"label":{…}`.
func (f *Figures) appendJSON(dst []byte) []byte {
	dst = encode.AppendString(dst, f.Label)
	dst = append(dst, `:{"v_v":`...)
	dst = appendRound(dst, f.V, decV)
	if f.voltOnly {
		dst = append(dst, ',')
		dst = encode.AppendString(dst, f.distKeyV)
		dst = append(dst, ':')
		dst = appendRound(dst, f.VDist, decPct)
		return append(dst, '}')
	}
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
	dst = appendLeadLag(dst, f.LeadLag)
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
