package alarm

import (
	"fmt"
	"math"
	"time"

	"github.com/gridloupe/gridloupe/metrics"
	"github.com/gridloupe/gridloupe/metrics/events"
)

// State is one rule's persistent state. It is JSON-serialisable (no NaN is
// ever stored in it), so the store can keep it across restarts.
type State struct {
	Raised       bool      `json:"raised"`
	Since        time.Time `json:"since"`         // sample time the current state began; zero when never changed
	Pending      bool      `json:"pending"`       // the opposite state's condition holds, its delay is running
	PendingSince time.Time `json:"pending_since"` // sample time the pending condition was first met
	Value        float64   `json:"value"`         // last non-null value evaluated
	Learned      Learned   `json:"learned"`       // baseline rules: the commissioning baseline
}

// Transition is one raise or clear.
type Transition struct {
	Rule      string
	Raised    bool      // true: raised; false: cleared
	Time      time.Time // sample time: end of the record that completed the transition
	Value     float64   // the metric's value in that record
	Threshold float64
	Level     metrics.Interval
	Severity  string
	Text      string
	Metric    string
	// Event: event rules: the event that raised the rule (raised) or the
	// last one that held it (cleared; nil after a restart, and then Value
	// and Threshold are NaN); nil otherwise. Read-only: the Evaluator
	// shares it between transitions.
	Event *Event
}

// Evaluator applies rules to records. It is not safe for concurrent use.
//
// Semantics, per rule and per record of the rule's level, at the record's
// sample time t = Start + DurationS (its end):
//
//   - Two states, raised and cleared; every change is a Transition.
//   - Cleared → raised when the raise condition (value > Threshold for Above
//     rules, value < Threshold for below rules) has been met by every
//     evaluated record from one starting at t0 to this one, with t − t0 ≥
//     OnDelay: the condition has held for the delay (on_delay 20m over
//     10 min values raises on the second value that meets it). Raised → cleared likewise with the clear condition (value <
//     Threshold − Deadband, resp. > Threshold + Deadband) and OffDelay. A
//     delay of 0 transitions on the first record that meets the condition.
//   - A valid record that does not meet the condition cancels the pending
//     timer; a value inside the deadband therefore neither raises nor
//     clears, and cannot make the alarm chatter.
//   - A null value (NaN: undefined, absent) holds the state and leaves any
//     pending timer untouched: it neither cancels it nor completes a
//     transition. The next valid record decides, and if it still meets the
//     condition the time since PendingSince counts, including the null span.
//   - Light load (MinLoad > 0 and the mean RMS of LoadChannels below it, or
//     null) is treated exactly like a null value.
//   - Sample time going backwards (a clock step, a replay restarted at an
//     earlier --start) restarts a running timer at the new time.
//
// Rules on metric event are raised by Evaluator.Event and cleared by the
// sample time of every record given to Evaluate, whatever its level (see
// Event).
type Evaluator struct {
	rules []Rule
	c     []compiled
	st    []State
}

// New validates rules against the setup s and returns an Evaluator. States
// in restored (keyed by rule name, as States returned them) resume: a raised
// rule stays raised without a new Transition, and a pending timer continues
// from its PendingSince. Restored states for names not in rules are ignored.
func New(rules []Rule, s *metrics.Setup, restored map[string]State) (*Evaluator, error) {
	if s == nil {
		return nil, ErrSetup
	}
	e := &Evaluator{
		rules: make([]Rule, len(rules)),
		c:     make([]compiled, len(rules)),
		st:    make([]State, len(rules)),
	}
	seen := make(map[string]int, len(rules))
	for i := range rules {
		r := rules[i]
		r.LoadChannels = append([]int(nil), r.LoadChannels...)
		if j, dup := seen[r.Name]; dup && r.Name != "" {
			return nil, fmt.Errorf("rule %d and rule %d: name %q: %w", j, i, r.Name, ErrDuplicate)
		}
		seen[r.Name] = i
		c, err := compile(&r, s)
		if err != nil {
			return nil, fmt.Errorf("rule %d: %w", i, err)
		}
		r.Kinds = append([]events.Kind(nil), r.Kinds...)
		e.rules[i], e.c[i] = r, c
		if st, ok := restored[r.Name]; ok {
			if !finite(st.Value) {
				st.Value = 0
			}
			e.st[i] = st
			if c.ev != nil && st.Raised && !st.Pending {
				c.ev.wait = true // held by an event the previous process never closed
			}
		}
	}
	return e, nil
}

// Evaluate applies the rules whose Level equals r.Interval to r and appends
// the transitions, in rule order, to dst. It allocates nothing when dst has
// room for them.
func (e *Evaluator) Evaluate(r *metrics.Record, dst []Transition) []Transition {
	if r == nil {
		return dst
	}
	d := r.DurationS
	if !(d >= 0 && d < 1e9) { // guard: not a duration time.Duration can hold
		d = 0
	}
	t := r.Start.Add(time.Duration(math.Round(d * 1e9)))
	for i := range e.rules {
		if e.c[i].ev != nil { // event rules: every record's time runs the clear timer
			if tr, ok := e.eventClock(i, r.Start, t); ok {
				dst = append(dst, tr)
			}
			continue
		}
		if e.rules[i].Level != r.Interval {
			continue
		}
		if tr, ok := e.step(i, r, t); ok {
			dst = append(dst, tr)
		}
	}
	return dst
}

// step advances rule i with record r at sample time t.
func (e *Evaluator) step(i int, r *metrics.Record, t time.Time) (Transition, bool) {
	ru, c, st := &e.rules[i], &e.c[i], &e.st[i]
	v := c.value(r)
	if math.IsNaN(v) {
		return Transition{}, false // null: hold, pending untouched
	}
	st.Value = v
	if ru.MinLoad > 0 {
		if l := c.loadA(r); !(l >= ru.MinLoad) {
			return Transition{}, false // light load (or unknown): hold, pending untouched
		}
	}
	x, thr, shown := v, ru.Threshold, ru.Threshold
	if ru.Baseline != nil {
		dev, mean, _ := e.relative(i, r, v, t)
		if math.IsNaN(dev) {
			return Transition{}, false // learning, or no baseline at this load: hold
		}
		x = dev
		if !ru.Above {
			thr = -ru.Threshold
		}
		shown = mean + thr // the threshold the value crossed, in metric units
	}
	var meets bool
	var delay time.Duration
	switch {
	case !st.Raised && ru.Above:
		meets, delay = x > thr, ru.OnDelay
	case !st.Raised:
		meets, delay = x < thr, ru.OnDelay
	case ru.Above:
		meets, delay = x < thr-ru.Deadband, ru.OffDelay
	default:
		meets, delay = x > thr+ru.Deadband, ru.OffDelay
	}
	if !meets {
		st.Pending, st.PendingSince = false, time.Time{}
		return Transition{}, false
	}
	// The condition holds from the start of the first record that meets
	// it, so a delay counts the time it has held: on_delay 20m over 10 min
	// values raises on the second such value.
	if !st.Pending || r.Start.Before(st.PendingSince) {
		st.Pending, st.PendingSince = true, r.Start
	}
	if t.Sub(st.PendingSince) < delay {
		return Transition{}, false
	}
	st.Raised = !st.Raised
	st.Since = t
	st.Pending, st.PendingSince = false, time.Time{}
	return Transition{
		Rule:      ru.Name,
		Raised:    st.Raised,
		Time:      t,
		Value:     v,
		Threshold: shown,
		Level:     ru.Level,
		Severity:  ru.Severity,
		Text:      ru.Text,
		Metric:    ru.Metric,
	}, true
}

// States returns a copy of every rule's state, keyed by rule name.
func (e *Evaluator) States() map[string]State {
	out := make(map[string]State, len(e.rules))
	for i := range e.rules {
		out[e.rules[i].Name] = e.st[i]
	}
	return out
}

// Value returns rule's metric in r (rule is an index into the rules given to
// New): NaN when the value is null or absent, or rule is out of range.
func (e *Evaluator) Value(rule int, r *metrics.Record) float64 {
	if rule < 0 || rule >= len(e.c) || r == nil {
		return math.NaN()
	}
	return e.c[rule].value(r)
}

// Active returns the names of the raised rules, in rule order.
func (e *Evaluator) Active() []string {
	var out []string
	for i := range e.rules {
		if e.st[i].Raised {
			out = append(out, e.rules[i].Name)
		}
	}
	return out
}

// Channel returns the name of the channel a rule reads (from names, indexed
// like Setup.Channels), or "" for rules on a phase, the total, or none.
func (e *Evaluator) Channel(rule string, names []string) string {
	for i := range e.rules {
		if e.rules[i].Name == rule {
			if c := e.c[i].ch; c >= 0 && c < len(names) {
				return names[c]
			}
			return ""
		}
	}
	return ""
}

// Rules returns a copy of the rules, in order.
func (e *Evaluator) Rules() []Rule { return append([]Rule(nil), e.rules...) }
