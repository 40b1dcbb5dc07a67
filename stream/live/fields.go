package live

import (
	"github.com/gridloupe/gridloupe/metrics"
)

// Field is one number of a record that the servers expose: its key path in
// the record schema (freq_hz, total.pf, phase.a.dpf, va.rms,
// ia.tdd_h50_pct, unbalance.voltage_pct), its unit, and the Prometheus
// family and labels it maps to.
type Field struct {
	Key     string // record key path
	Unit    string // unit as written in the register map: Hz, V, A, W, var, VA, %, 1
	Metric  string // Prometheus family name without the gridloupe_ prefix, in base units
	Help    string // Prometheus help text
	Scale   float64
	Channel string // label; "" when none
	Phase   string // label: a, b, c, n or total; "" when none
	Circuit string // label: the circuit's name (several circuits on one bus); "" for the bus
	Get     func(r *metrics.Record) float64
}

// Value returns the field's value in r in the record's units (NaN when
// undefined or when r is nil).
func (f *Field) Value(r *metrics.Record) float64 {
	if r == nil {
		return metrics.Null()
	}
	return f.Get(r)
}

// Fields lists the fields of records of setup s in a fixed order: the
// frequency, the totals, each phase, each channel, the unbalance. The list
// depends only on s, so a register map built from it is stable.
func Fields(s *metrics.Setup) []Field {
	var out []Field
	add := func(f Field) {
		if f.Scale == 0 {
			f.Scale = 1
		}
		out = append(out, f)
	}
	add(Field{Key: "freq_hz", Unit: "Hz", Metric: "frequency_hertz", Help: "Line frequency (mean over the interval).",
		Get: func(r *metrics.Record) float64 { return r.FreqHz }})
	powerFields(add, s, "", "", func(r *metrics.Record) *metrics.Record { return r })
	for k, c := range s.Circuits {
		powerFields(add, c.Sub, "circuit."+c.Name+".", c.Name, func(r *metrics.Record) *metrics.Record {
			if k < len(r.Circuits) {
				return r.Circuits[k].Rec
			}
			return nil
		})
	}
	for i, ch := range s.Channels {
		ph := string(ch.Phase)
		unit, metric, help := "V", "rms_volts", "RMS voltage (true RMS over the interval)."
		if ch.Kind == metrics.Current {
			unit, metric, help = "A", "rms_amperes", "RMS current (true RMS over the interval)."
		}
		add(Field{Key: ch.Name + ".rms", Unit: unit, Metric: metric, Help: help, Channel: ch.Name, Phase: ph,
			Get: func(r *metrics.Record) float64 { return r.Channels[i].RMS }})
		add(Field{Key: ch.Name + ".thd_pct", Unit: "%", Metric: "thd_ratio", Help: "Total harmonic distortion relative to the fundamental, every component but DC and the fundamental.", Scale: 0.01,
			Channel: ch.Name, Phase: ph, Get: func(r *metrics.Record) float64 { return r.Channels[i].THDPct }})
		if s.AllOrders {
			add(Field{Key: ch.Name + ".thd_h50_pct", Unit: "%", Metric: "thd_h50_ratio", Help: "Total harmonic distortion over orders 2 to 50, relative to the fundamental.", Scale: 0.01,
				Channel: ch.Name, Phase: ph, Get: func(r *metrics.Record) float64 { return r.Channels[i].THDH50Pct }})
		}
		if ch.Kind == metrics.Current && s.IL(i) > 0 {
			add(Field{Key: ch.Name + ".tdd_pct", Unit: "%", Metric: "tdd_ratio", Help: "Total demand distortion: harmonic current relative to IL.", Scale: 0.01,
				Channel: ch.Name, Phase: ph, Get: func(r *metrics.Record) float64 { return r.Channels[i].TDDPct }})
			if s.AllOrders {
				add(Field{Key: ch.Name + ".tdd_h50_pct", Unit: "%", Metric: "tdd_h50_ratio", Help: "Total demand distortion over orders 2 to 50, relative to IL.", Scale: 0.01,
					Channel: ch.Name, Phase: ph, Get: func(r *metrics.Record) float64 { return r.Channels[i].TDDH50Pct }})
			}
		}
	}
	if hasSeq(s, metrics.Voltage) {
		add(Field{Key: "unbalance.voltage_pct", Unit: "%", Metric: "voltage_unbalance_ratio", Help: "Voltage unbalance: negative over positive sequence fundamental.", Scale: 0.01,
			Get: func(r *metrics.Record) float64 { return r.UnbV }})
	}
	if hasSeq(s, metrics.Current) {
		add(Field{Key: "unbalance.current_pct", Unit: "%", Metric: "current_unbalance_ratio", Help: "Current unbalance: negative over positive sequence fundamental.", Scale: 0.01,
			Get: func(r *metrics.Record) float64 { return r.UnbI }})
	}
	return out
}

// hasSeq reports whether records of s carry sequence values (and so
// unbalance) for kind k.
func hasSeq(s *metrics.Setup, k metrics.Kind) bool {
	r := metrics.NewRecord(s)
	if k == metrics.Voltage {
		return len(r.SeqV) > 0
	}
	return len(r.SeqI) > 0
}

// powerFields adds the totals and phase powers of records of s (the bus,
// or one circuit's sub-setup reached through sel, which returns nil when
// the record has no such circuit), keys prefixed pre and labelled circuit
// circ.
func powerFields(add func(Field), s *metrics.Setup, pre, circ string, sel func(*metrics.Record) *metrics.Record) {
	type pw struct {
		key, unit, metric, help string
		get                     func(p *metrics.PhaseValues) float64
	}
	powers := []pw{
		{"p_w", "W", "active_power_watts", "Active power.", func(p *metrics.PhaseValues) float64 { return p.P }},
		{"q_var", "var", "fundamental_reactive_power_vars", "Fundamental reactive power Q1, positive when inductive (lagging).", func(p *metrics.PhaseValues) float64 { return p.Q1 }},
		{"s_va", "VA", "apparent_power_voltamperes", "Apparent power (total: arithmetic sum of the phases).", func(p *metrics.PhaseValues) float64 { return p.S }},
		{"pf", "1", "power_factor_ratio", "True power factor P/S, with the sign of P (total: P/Se).", func(p *metrics.PhaseValues) float64 { return p.PF }},
		{"dpf", "1", "displacement_power_factor_ratio", "Displacement power factor, with the sign of P (total: P1+/S1+).", func(p *metrics.PhaseValues) float64 { return p.DPF }},
	}
	total := func(get func(t *metrics.TotalValues) float64) func(*metrics.Record) float64 {
		return func(r *metrics.Record) float64 {
			if x := sel(r); x != nil {
				return get(&x.Total)
			}
			return metrics.Null()
		}
	}
	if s.HasTotal() {
		for _, p := range powers {
			get := p.get
			if p.key == "s_va" && s.Wiring == metrics.Delta {
				continue // no arithmetic sum without phase-to-neutral voltages
			}
			add(Field{Key: pre + "total." + p.key, Unit: p.unit, Metric: p.metric, Help: p.help, Phase: "total", Circuit: circ,
				Get: total(func(t *metrics.TotalValues) float64 {
					return get(&metrics.PhaseValues{P: t.P, Q1: t.Q1, S: t.S, PF: t.PF, DPF: t.DPF})
				})})
		}
		add(Field{Key: pre + "total.se_va", Unit: "VA", Metric: "effective_apparent_power_voltamperes", Help: "IEEE 1459 effective apparent power Se.", Phase: "total", Circuit: circ,
			Get: total(func(t *metrics.TotalValues) float64 { return t.Se })})
		add(Field{Key: pre + "total.ve_v", Unit: "V", Metric: "effective_voltage_volts", Help: "IEEE 1459 effective voltage Ve.", Phase: "total", Circuit: circ,
			Get: total(func(t *metrics.TotalValues) float64 { return t.Ve })})
		add(Field{Key: pre + "total.ie_a", Unit: "A", Metric: "effective_current_amperes", Help: "IEEE 1459 effective current Ie.", Phase: "total", Circuit: circ,
			Get: total(func(t *metrics.TotalValues) float64 { return t.Ie })})
	}
	for i, pr := range s.Pairs {
		ph := string(pr.Phase)
		for _, p := range powers {
			get := p.get
			add(Field{Key: pre + "phase." + ph + "." + p.key, Unit: p.unit, Metric: p.metric, Help: p.help, Phase: ph, Circuit: circ,
				Get: func(r *metrics.Record) float64 {
					if x := sel(r); x != nil && i < len(x.Phases) {
						return get(&x.Phases[i])
					}
					return metrics.Null()
				}})
		}
	}
}
