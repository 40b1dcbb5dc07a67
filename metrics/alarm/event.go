package alarm

import (
	"fmt"
	"math"
	"slices"
	"time"

	"github.com/gridloupe/gridloupe/metrics"
	"github.com/gridloupe/gridloupe/metrics/events"
)

// MetricEvent is the metric of a rule that watches voltage events (dips,
// swells, interruptions) instead of a record value: Evaluator.Event raises
// it, the records' sample time clears it.
const MetricEvent = "event"

// Event is a voltage event as an event rule sees it. The gateway fills it
// from the detector's record, with the threshold the event crossed.
type Event struct {
	ID         string      // the event's id ("dip-20260301T100001.020000Z")
	Kind       events.Kind // its kind; a dip may turn into an interruption before it ends
	Start      time.Time   // sample time of its start
	DurationS  float64     // its duration, s; while Open: how long it has lasted so far
	Channels   []string    // voltage channels that crossed the threshold
	ExtremeV   float64     // residual (dips, interruptions) or maximum (swells), V
	ExtremePct float64     // ExtremeV in % of the declared voltage
	ThresholdV float64     // the threshold it crossed, V (the transition's Threshold)
	// Open: the event is still going (the gateway learns of a long event
	// when its waveform capture is complete, before it ends); its end will
	// be reported by a later call with the same Start.
	Open bool
	// Unfinished: the event was closed because the input ended or the
	// gateway stopped, not because the voltage recovered.
	Unfinished bool
}

// End returns the sample time the event ended (while Open: how far it has
// lasted).
func (ev *Event) End() time.Time {
	d := ev.DurationS
	if !(d >= 0 && d < 1e9) {
		d = 0
	}
	return ev.Start.Add(time.Duration(math.Round(d * 1e9)))
}

// machine is the detector machine an event kind belongs to: dips and
// interruptions share one (a dip can turn into an interruption), swells
// have their own.
func machine(k events.Kind) int {
	if k == events.Swell {
		return 1
	}
	return 0
}

// eventRule is an event rule's state that is not persisted: the events
// currently holding it raised, and the last event it saw.
type eventRule struct {
	kinds uint8        // bit k: events.Kind(k) matches; all kinds when the rule names none
	chans string       // channel name watched; "" = any voltage channel
	open  [2]time.Time // start of an open event holding the rule raised, per machine; zero = none
	last  *Event       // the last matching event (carried into the clear transition)
	// wait: restored raised without a running clear timer (an event was
	// open when the previous process ended without closing it): the first
	// record seen starts the timer.
	wait bool
}

// compileEvent validates an event rule: kinds, an optional voltage
// channel, on/off delays; every key of record rules must be unset.
func compileEvent(r *Rule, s *metrics.Setup, c *compiled) error {
	switch {
	case r.Harmonic != 0:
		return fmt.Errorf("rule %q: harmonic does not apply to metric %s: %w", r.Name, MetricEvent, ErrRule)
	case r.Threshold != 0 || r.Above:
		return fmt.Errorf("rule %q: a threshold does not apply to metric %s (the events config sets the thresholds): %w", r.Name, MetricEvent, ErrRule)
	case r.Deadband != 0:
		return fmt.Errorf("rule %q: deadband does not apply to metric %s: %w", r.Name, MetricEvent, ErrRule)
	case r.MinLoad != 0 || len(r.LoadChannels) > 0:
		return fmt.Errorf("rule %q: min load does not apply to metric %s: %w", r.Name, MetricEvent, ErrRule)
	case r.Baseline != nil:
		return fmt.Errorf("rule %q: a baseline does not apply to metric %s: %w", r.Name, MetricEvent, ErrRule)
	case r.Target.Phase != 0 || r.Target.Total || r.Target.Circuit != "":
		return fmt.Errorf("rule %q: metric %s watches voltage channels, not a phase, total or circuit: %w", r.Name, MetricEvent, ErrTarget)
	case r.OnDelay < 0 || r.OffDelay < 0:
		return fmt.Errorf("rule %q: delays %v/%v must be ≥ 0: %w", r.Name, r.OnDelay, r.OffDelay, ErrRule)
	}
	er := &eventRule{}
	for _, k := range r.Kinds {
		if k.String() == "invalid" {
			return fmt.Errorf("rule %q: event kind %d (allowed: dip, swell, interruption): %w", r.Name, k, ErrRule)
		}
		er.kinds |= 1 << k
	}
	if er.kinds == 0 {
		er.kinds = 1<<events.Dip | 1<<events.Swell | 1<<events.Interruption
	}
	if ci := r.Target.Channel; ci >= 0 {
		if ci >= len(s.Channels) || s.Channels[ci].Kind != metrics.Voltage {
			return fmt.Errorf("rule %q: metric %s: channel index %d is not a voltage channel: %w", r.Name, MetricEvent, ci, ErrTarget)
		}
		c.ch, er.chans = ci, s.Channels[ci].Name
	}
	c.ev = er
	return nil
}

// matches reports whether ev is an event rule i watches (kind, channel and
// the minimum duration OnDelay).
func (e *Evaluator) matches(i int, ev *Event) bool {
	er := e.c[i].ev
	if er.kinds&(1<<ev.Kind) == 0 || (er.chans != "" && !slices.Contains(ev.Channels, er.chans)) {
		return false
	}
	return ev.End().Sub(ev.Start) >= e.rules[i].OnDelay
}

// Event applies a voltage event to the event rules and appends the
// transitions, in rule order, to dst. Semantics, per event rule:
//
//   - An event of one of the rule's kinds (every kind when the rule names
//     none), on the rule's channel if it names one, that has lasted at
//     least OnDelay (a minimum duration; 0 = any event) raises the rule at
//     the event's end, or while it is still going when ev.Open: a long
//     interruption raises before it is over. The transition's Value is the
//     event's extreme, its Threshold ev.ThresholdV, its Event the event.
//   - While such an open event lasts the rule cannot clear; when it ends
//     (reported again, not Open, with the same Start; whatever kind it
//     ended as) the clear timer starts at its end.
//   - A raised rule clears once the sample time of the records
//     (Evaluate) reaches OffDelay past the end of the last event that
//     raised or held it; a new matching event restarts the timer.
//   - An event closed unfinished (the input ended, the gateway stopped)
//     counts as ended at that time.
//
// ev.Channels is copied where kept.
func (e *Evaluator) Event(ev *Event, dst []Transition) []Transition {
	if ev == nil {
		return dst
	}
	mc := machine(ev.Kind)
	end := ev.End()
	for i := range e.rules {
		er := e.c[i].ev
		if er == nil {
			continue
		}
		st := &e.st[i]
		held := !er.open[mc].IsZero() && er.open[mc].Equal(ev.Start)
		match := e.matches(i, ev)
		if ev.Open {
			if !match {
				continue
			}
			er.open[mc] = ev.Start
			st.Pending, st.PendingSince, er.wait = false, time.Time{}, false
		} else {
			if held {
				er.open[mc] = time.Time{}
			}
			if !match && !held {
				continue
			}
			if er.open[1-mc].IsZero() && (!st.Pending || end.After(st.PendingSince)) {
				st.Pending, st.PendingSince, er.wait = true, end, false
			}
		}
		if match {
			kept := *ev
			kept.Channels = slices.Clone(ev.Channels)
			er.last = &kept
			st.Value = finiteOr0(ev.ExtremeV)
		}
		if !match || st.Raised {
			continue
		}
		st.Raised, st.Since = true, end
		dst = append(dst, e.eventTransition(i, end, true))
	}
	return dst
}

// eventClock advances event rule i to a record ending at t (starting at
// start): a raised rule clears OffDelay after its clear timer started.
// The timer does not run while an open event holds the rule (Event stops
// it), and records that end before it started (a record still on its way
// when the event was reported) change nothing.
func (e *Evaluator) eventClock(i int, start, t time.Time) (Transition, bool) {
	er, st := e.c[i].ev, &e.st[i]
	if !st.Raised {
		return Transition{}, false
	}
	if !st.Pending {
		if !er.wait {
			return Transition{}, false
		}
		st.Pending, st.PendingSince, er.wait = true, start, false
	}
	if t.Sub(st.PendingSince) < e.rules[i].OffDelay { // OffDelay ≥ 0: also a record ending before the timer started
		return Transition{}, false
	}
	st.Raised, st.Since = false, t
	st.Pending, st.PendingSince = false, time.Time{}
	return e.eventTransition(i, t, false), true
}

func (e *Evaluator) eventTransition(i int, t time.Time, raised bool) Transition {
	ru, er := &e.rules[i], e.c[i].ev
	tr := Transition{Rule: ru.Name, Raised: raised, Time: t, Value: math.NaN(), Threshold: math.NaN(), Level: ru.Level,
		Severity: ru.Severity, Text: ru.Text, Metric: ru.Metric}
	if l := er.last; l != nil { // else: cleared after a restart, the event is not known: value and threshold NaN (null)
		// shared, not copied, so that a clear in Evaluate allocates
		// nothing: Event replaces er.last, it never changes it
		tr.Event, tr.Value, tr.Threshold = l, l.ExtremeV, l.ThresholdV
	}
	return tr
}

func finiteOr0(x float64) float64 {
	if finite(x) {
		return x
	}
	return 0
}
