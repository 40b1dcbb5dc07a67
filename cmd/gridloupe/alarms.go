package main

import (
	"fmt"
	"strings"

	"github.com/gridloupe/gridloupe/config"
	"github.com/gridloupe/gridloupe/metrics"
	"github.com/gridloupe/gridloupe/metrics/alarm"
	"github.com/gridloupe/gridloupe/metrics/events"
	"github.com/gridloupe/gridloupe/metrics/limits"
)

// distortionMetrics are the metrics whose limits come from IEEE 519.
var distortionMetrics = map[string]bool{"thd_pct": true, "thd_h50_pct": true, "tdd_pct": true,
	"tdd_h50_pct": true, "pct": true, "pct_il": true}

// alarmRules translates the config's alarm rules.
func alarmRules(cfg *config.Config, s *metrics.Setup) ([]alarm.Rule, error) {
	var out []alarm.Rule
	var phaseCurrents []int
	for i, ch := range s.Channels {
		if ch.Kind == metrics.Current && ch.Phase != 'n' {
			phaseCurrents = append(phaseCurrents, i)
		}
	}
	for _, a := range cfg.Alarms {
		if a.Metric == config.MetricEvent {
			r, err := eventRule(cfg, a)
			if err != nil {
				return nil, err
			}
			out = append(out, r)
			continue
		}
		lv, ok := metrics.ParseInterval(a.Level)
		if !ok {
			return nil, usagef("%s:%d: alarm %q: level %q", cfg.Path, a.Line, a.Name, a.Level)
		}
		r := alarm.Rule{Name: a.Name, Metric: a.Metric, Harmonic: a.Harmonic, Level: lv, Deadband: a.Deadband,
			OnDelay: a.OnDelay, OffDelay: a.OffDelay, Severity: a.Severity, Target: alarm.Target{Channel: -1}}
		if a.Above != nil {
			r.Above, r.Threshold = true, *a.Above
		} else if a.Below != nil {
			r.Threshold = *a.Below
		}
		ci := cfg.ChannelIndex(a.Channel)
		switch a.Metric {
		case "pf", "dpf":
			if a.Phase == "" || a.Phase == "total" {
				r.Target.Total = true
			} else {
				r.Target.Phase = a.Phase[0]
			}
			r.Target.Circuit = a.Circuit
		case "unbalance_current_pct":
			r.Target.Circuit = a.Circuit // with circuits: the circuit whose phase currents are watched
		case "freq_hz", "unbalance_voltage_pct":
		default:
			r.Target.Channel = ci
		}
		if a.MinLoadPct > 0 {
			base := cfg.ILA
			if ci >= 0 && s.Channels[ci].Kind == metrics.Current {
				base = s.IL(ci)
				if base == 0 {
					base = s.Channels[ci].FullScale
				}
				r.LoadChannels = []int{ci}
			} else {
				// per-phase pf/dpf: that phase's current; total: all phases
				// (of the rule's circuit, with circuits)
				r.LoadChannels = phaseCurrents
				if k := s.CircuitIndex(a.Circuit); k >= 0 {
					r.LoadChannels = nil
					for _, ci := range s.Circuits[k].Currents {
						if s.Channels[ci].Phase != 'n' {
							r.LoadChannels = append(r.LoadChannels, ci)
						}
					}
					if il := s.Circuits[k].ILA; il > 0 {
						base = il
					}
				}
				if r.Target.Phase != 0 {
					for _, pc := range phaseCurrents {
						if s.Channels[pc].Phase == r.Target.Phase {
							r.LoadChannels = []int{pc}
						}
					}
				}
				if base == 0 && len(r.LoadChannels) > 0 {
					base = s.Channels[r.LoadChannels[0]].FullScale
				}
			}
			r.MinLoad = a.MinLoadPct / 100 * base
		}
		if a.RelativeTo == config.RelativeBaseline {
			r.Baseline = &alarm.Baseline{Learn: a.Learn, Base: baselineBase(cfg, s, ci)}
		}
		r.Text = alarmText(cfg, a)
		out = append(out, r)
	}
	return out, nil
}

// eventRule translates a rule on metric event.
func eventRule(cfg *config.Config, a config.Alarm) (alarm.Rule, error) {
	r := alarm.Rule{Name: a.Name, Metric: alarm.MetricEvent, OnDelay: a.OnDelay, OffDelay: a.OffDelay,
		Severity: a.Severity, Target: alarm.Target{Channel: cfg.ChannelIndex(a.Channel)}}
	if a.Channel == "" {
		r.Target.Channel = -1
	}
	for _, k := range a.Kinds {
		kind, ok := events.ParseKind(k)
		if !ok {
			return r, usagef("%s:%d: alarm %q: kind %q", cfg.Path, a.Line, a.Name, k)
		}
		r.Kinds = append(r.Kinds, kind)
	}
	r.Text = eventAlarmText(cfg, a)
	return r, nil
}

// eventAlarmText is an event rule's sentence: the kinds with the events
// config's thresholds, where, and when it clears.
func eventAlarmText(cfg *config.Config, a config.Alarm) string {
	kinds := a.Kinds
	if len(kinds) == 0 {
		kinds = config.EventKinds
	}
	e := cfg.Events
	var what []string
	for _, k := range kinds {
		switch k {
		case "dip":
			what = append(what, fmt.Sprintf("dip (below %g %%)", e.DipPct))
		case "swell":
			what = append(what, fmt.Sprintf("swell (above %g %%)", e.SwellPct))
		case "interruption":
			what = append(what, fmt.Sprintf("interruption (every phase below %g %%)", e.InterruptionPct))
		}
	}
	where := "any voltage channel"
	if a.Channel != "" {
		where = a.Channel
	}
	var b strings.Builder
	fmt.Fprintf(&b, "voltage %s of %g V on %s", strings.Join(what, " or "), cfg.Nominal.VoltageV, where)
	if a.OnDelay > 0 {
		fmt.Fprintf(&b, ", lasting %s or more", shortDuration(a.OnDelay))
	}
	fmt.Fprintf(&b, "; clears %s after the last one ended", shortDuration(a.OffDelay))
	return b.String()
}

// alarmText is the human sentence carried in each transition message.
func alarmText(cfg *config.Config, a config.Alarm) string {
	var b strings.Builder
	where := a.Channel
	if where == "" {
		where = a.Phase
		if where == "" {
			where = "total"
		}
	}
	dir, th := "above", 0.0
	if a.Above != nil {
		th = *a.Above
	} else if a.Below != nil {
		dir, th = "below", *a.Below
	}
	metric := a.Metric
	if a.Harmonic > 0 {
		metric = fmt.Sprintf("h%d %s", a.Harmonic, a.Metric)
	}
	if a.RelativeTo == config.RelativeBaseline {
		fmt.Fprintf(&b, "%s %s %g %s its commissioning baseline at the same load (%s values, learned over %v)", where, metric, th, dir, a.Level, a.Learn)
	} else {
		fmt.Fprintf(&b, "%s %s %s %g (%s values)", where, metric, dir, th, a.Level)
	}
	if distortionMetrics[a.Metric] {
		b.WriteString(". " + alarm.PCCNote + " (" + limits.Edition + ")")
	}
	return b.String()
}

// baselineBase is the current, A, a baseline's load bins are percentages
// of: il_a, else nominal.current_a, else the full scale of the rule's
// current channel or of the first current channel that has one.
func baselineBase(cfg *config.Config, s *metrics.Setup, ci int) float64 {
	switch {
	case cfg.ILA > 0:
		return cfg.ILA
	case cfg.Nominal.CurrentA > 0:
		return cfg.Nominal.CurrentA
	case ci >= 0 && s.Channels[ci].Kind == metrics.Current && s.Channels[ci].FullScale > 0:
		return s.Channels[ci].FullScale
	}
	for _, ch := range s.Channels {
		if ch.Kind == metrics.Current && ch.FullScale > 0 {
			return ch.FullScale
		}
	}
	return 0
}
