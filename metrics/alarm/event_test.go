package alarm

import (
	"encoding/json"
	"errors"
	"math"
	"testing"
	"time"

	"github.com/gridloupe/gridloupe/metrics"
	"github.com/gridloupe/gridloupe/metrics/events"
)

// Sources of the event-rule check values.
const (
	srcEvRule = "Evaluator.Event doc / README 'Alarm rules' metric: event: raise at the end of a matching event (or while a long one is open), clear off_delay of sample time after the last one ended"
	srcEvTime = "closed form: a 3 s record from s to s+3 s ends at s+3; an event from a lasting d ends at a+d; the clear needs end + off_delay ≤ the record's end"
)

// evStep is one input of an event-rule scenario: an event, or a 3 s record
// starting at rec seconds (when ev is nil).
type evStep struct {
	ev  *Event
	rec float64
}

// evAt is an event of kind k from a s lasting d s on chans (invented
// figures: a residual of 120 V under a 207 V threshold, 90 % of 230 V).
func evAt(k events.Kind, a, d float64, chans ...string) *Event {
	if len(chans) == 0 {
		chans = []string{"va"}
	}
	st := t0.Add(time.Duration(a * float64(time.Second)))
	return &Event{ID: events.ID(k, st), Kind: k, Start: st, DurationS: d, Channels: chans,
		ExtremeV: 120, ExtremePct: 120.0 / 230 * 100, ThresholdV: 207}
}

func opened(e *Event) *Event   { e.Open = true; return e }
func rec(s float64) evStep     { return evStep{rec: s} }
func evs(e *Event) evStep      { return evStep{ev: e} }
func secs(d float64) time.Time { return t0.Add(time.Duration(math.Round(d * 1e9))) }

// runEvents feeds steps to a fresh evaluator with rule r (and restored
// state), returning the transitions with their times in seconds from t0.
func runEvents(t *testing.T, r Rule, restored map[string]State, steps []evStep) ([]Transition, *Evaluator) {
	t.Helper()
	e, err := New([]Rule{r}, northWeir(t, 1, 5), restored)
	if err != nil {
		t.Fatalf("New: %v", err)
	}
	var out []Transition
	for _, s := range steps {
		if s.ev != nil {
			out = e.Event(s.ev, out)
			continue
		}
		out = e.Evaluate(&metrics.Record{Interval: metrics.Int3s, Start: secs(s.rec), DurationS: 3}, out)
	}
	return out, e
}

func TestEventRules(t *testing.T) {
	dip := Rule{Name: "supply-dip", Metric: MetricEvent, Kinds: []events.Kind{events.Dip}, Target: Target{Channel: -1},
		OffDelay: 10 * time.Minute, Severity: "warning", Text: "supply dip"}
	with := func(r Rule, f func(*Rule)) Rule { f(&r); return r }
	type want struct {
		raised bool
		at     float64 // seconds from t0
	}
	tests := []struct {
		name  string
		rule  Rule
		steps []evStep
		want  []want
		src   string
	}{
		{
			name:  "a dip raises at its end and clears off_delay later",
			rule:  dip,
			steps: []evStep{rec(0), evs(evAt(events.Dip, 10, 0.12)), rec(606), rec(609), rec(612)},
			// end 10.12 s; 10.12 + 600 = 610.12: the record 606..609 ends short of it, 609..612 past it
			want: []want{{true, 10.12}, {false, 612}},
			src:  srcEvRule + "; " + srcEvTime,
		},
		{
			name:  "a swell does not raise a dip rule",
			rule:  dip,
			steps: []evStep{evs(evAt(events.Swell, 10, 0.3)), rec(900)},
			src:   srcEvRule + ": kind filters",
		},
		{
			name:  "an interruption does not raise a dip rule",
			rule:  dip,
			steps: []evStep{evs(evAt(events.Interruption, 10, 0.3, "va", "vb", "vc"))},
			src:   srcEvRule + ": kind filters",
		},
		{
			name:  "no kinds: every kind raises",
			rule:  with(dip, func(r *Rule) { r.Kinds = nil }),
			steps: []evStep{evs(evAt(events.Swell, 10, 0.3)), rec(610), rec(613)},
			want:  []want{{true, 10.3}, {false, 613}},
			src:   srcEvRule + ": kind absent = any; " + srcEvTime,
		},
		{
			name: "several kinds",
			rule: with(dip, func(r *Rule) { r.Kinds = []events.Kind{events.Swell, events.Interruption} }),
			steps: []evStep{evs(evAt(events.Dip, 5, 0.1)), evs(evAt(events.Interruption, 20, 1, "va", "vb", "vc")),
				rec(618), rec(621)},
			want: []want{{true, 21}, {false, 621}},
			src:  srcEvRule + "; " + srcEvTime + ": 21 + 600 = 621",
		},
		{
			name:  "channel: an event on other channels does not raise",
			rule:  with(dip, func(r *Rule) { r.Target.Channel = chVB }),
			steps: []evStep{evs(evAt(events.Dip, 10, 0.1, "va")), evs(evAt(events.Dip, 20, 0.1, "va", "vb")), rec(618)},
			want:  []want{{true, 20.1}, {false, 621}},
			src:   srcEvRule + ": channel filters; " + srcEvTime,
		},
		{
			name:  "on_delay: an event shorter than it does not raise, a longer one does",
			rule:  with(dip, func(r *Rule) { r.OnDelay = 500 * time.Millisecond }),
			steps: []evStep{evs(evAt(events.Dip, 10, 0.2)), evs(evAt(events.Dip, 30, 0.5))},
			want:  []want{{true, 30.5}},
			src:   "README 'Alarm rules': on_delay of an event rule is the minimum event duration (0.5 s ≥ 0.5 s raises)",
		},
		{
			name: "a second event restarts the clear timer",
			rule: dip,
			steps: []evStep{evs(evAt(events.Dip, 10, 0.1)), rec(300), evs(evAt(events.Dip, 303, 0.2)),
				rec(609), rec(612), rec(900), rec(903)},
			// second end 303.2 s; cleared at the first record ending ≥ 903.2 s, 903..906
			want: []want{{true, 10.1}, {false, 906}},
			src:  srcEvRule + "; " + srcEvTime,
		},
		{
			name: "a long interruption raises while open and holds until it ends",
			rule: with(dip, func(r *Rule) { r.Kinds = []events.Kind{events.Interruption} }),
			steps: []evStep{evs(opened(evAt(events.Interruption, 100, 3.8, "va", "vb", "vc"))),
				rec(900), rec(1200), evs(evAt(events.Interruption, 100, 1000, "va", "vb", "vc")),
				rec(1695), rec(1698)},
			// raised at 103.8 s (the capture cut); ends 1100 s; cleared by the record ending ≥ 1700 s
			want: []want{{true, 103.8}, {false, 1701}},
			src:  srcEvRule + "; " + srcEvTime,
		},
		{
			name: "an open event stops a running clear timer until it ends",
			rule: with(dip, func(r *Rule) { r.Kinds = nil }),
			steps: []evStep{evs(evAt(events.Dip, 10, 0.1)), rec(297), evs(opened(evAt(events.Interruption, 300, 3.8, "va", "vb", "vc"))),
				rec(700), evs(evAt(events.Interruption, 300, 400, "va", "vb", "vc")), rec(1294), rec(1297)},
			// without the hold the dip's timer (10.1 + 600) would clear at the record ending 703 s;
			// the interruption ends 700 s, cleared by the record ending ≥ 1300 s
			want: []want{{true, 10.1}, {false, 1300}},
			src:  srcEvRule + "; " + srcEvTime,
		},
		{
			name: "once an open swell ended, a later dip restarts the timer",
			rule: with(dip, func(r *Rule) { r.Kinds = nil }),
			steps: []evStep{evs(opened(evAt(events.Swell, 10, 3.8, "vc"))), evs(evAt(events.Swell, 10, 5, "vc")),
				evs(evAt(events.Dip, 100, 0.1)), rec(697), rec(700)},
			// the dip ends 100.1 s: cleared by the record ending ≥ 700.1 s, 700..703
			want: []want{{true, 13.8}, {false, 703}},
			src:  srcEvRule + "; " + srcEvTime,
		},
		{
			name:  "off_delay 0: a record that ended before the event did leaves it raised",
			rule:  with(dip, func(r *Rule) { r.OffDelay = 0 }),
			steps: []evStep{evs(evAt(events.Dip, 10, 5)), rec(9), rec(12)},
			// end 15 s: the record 9..12 was on its way when the dip was reported; 12..15 clears
			want: []want{{true, 15}, {false, 15}},
			src:  srcEvRule + "; eventClock doc: records that end before the timer started change nothing",
		},
		{
			name: "the timer runs from the later end of overlapping events of the two machines",
			rule: with(dip, func(r *Rule) { r.Kinds = nil }),
			steps: []evStep{evs(evAt(events.Swell, 10, 90, "vc")), evs(evAt(events.Dip, 95, 4)),
				rec(696), rec(699)},
			// the swell ends 100 s, the dip (reported after it) 99 s: cleared by the record ending ≥ 700 s, 699..702
			want: []want{{true, 100}, {false, 702}},
			src:  srcEvRule + ": off_delay after the last event ended; " + srcEvTime,
		},
		{
			name: "an open dip that ends as an interruption releases a dip rule at its end",
			rule: dip,
			steps: []evStep{evs(opened(evAt(events.Dip, 100, 3.8))), rec(800),
				evs(evAt(events.Interruption, 100, 20, "va", "vb", "vc")), rec(714), rec(717)},
			want: []want{{true, 103.8}, {false, 720}},
			src:  srcEvRule + ": whatever kind it ended as; " + srcEvTime + ": 120 + 600 = 720",
		},
		{
			name:  "an event closed unfinished counts as ended then",
			rule:  dip,
			steps: []evStep{evs(func() *Event { e := evAt(events.Dip, 50, 2); e.Unfinished = true; return e }()), rec(648), rec(651)},
			want:  []want{{true, 52}, {false, 654}},
			src:   srcEvRule + "; " + srcEvTime,
		},
		{
			name:  "records that ended before the event end do not clear",
			rule:  with(dip, func(r *Rule) { r.OffDelay = 0 }),
			steps: []evStep{evs(evAt(events.Dip, 10, 0.5)), rec(6), rec(9)},
			// off_delay 0: the first record ending at or after 10.5 s clears, 9..12
			want: []want{{true, 10.5}, {false, 12}},
			src:  srcEvRule + "; " + srcEvTime,
		},
		{
			name: "overlapping swell and dip: cleared off_delay after the later end",
			rule: with(dip, func(r *Rule) { r.Kinds = nil }),
			steps: []evStep{evs(opened(evAt(events.Swell, 10, 3.8, "vc"))), evs(evAt(events.Dip, 11, 0.2, "va")),
				rec(612), evs(evAt(events.Swell, 10, 5, "vc")), rec(609), rec(612)},
			want: []want{{true, 13.8}, {false, 615}},
			src:  srcEvRule + "; " + srcEvTime + ": swell ends 15 s, 15 + 600 = 615",
		},
	}
	for _, tc := range tests {
		t.Run(tc.name, func(t *testing.T) {
			got, _ := runEvents(t, tc.rule, nil, tc.steps)
			if len(got) != len(tc.want) {
				t.Fatalf("%d transitions %+v, want %v (src: %s)", len(got), got, tc.want, tc.src)
			}
			for i, w := range tc.want {
				g := got[i]
				if g.Raised != w.raised || !g.Time.Equal(secs(w.at)) {
					t.Errorf("transition %d: raised %v at %v, want %v at %v s (src: %s)", i, g.Raised, g.Time.Sub(t0), w.raised, w.at, tc.src)
				}
				if g.Event == nil || g.Value != 120 || g.Threshold != 207 || g.Metric != MetricEvent || g.Severity != "warning" || g.Text != "supply dip" {
					t.Errorf("transition %d: %+v, want the event, value 120 V, threshold 207 V, the rule's severity and text (src: the invented event of evAt)", i, g)
				}
			}
		})
	}
}

// TestEventRuleMessage: the raise carries the event's id, kind, extreme and
// duration; the clear carries the last event; the channels are copied.
func TestEventRuleMessage(t *testing.T) {
	r := Rule{Name: "supply-dip", Metric: MetricEvent, Target: Target{Channel: -1}, OffDelay: time.Minute}
	ev := evAt(events.Dip, 10, 0.12, "va", "vb")
	got, _ := runEvents(t, r, nil, []evStep{evs(ev), rec(70)})
	ev.Channels[0] = "changed"
	if len(got) != 2 {
		t.Fatalf("%d transitions, want a raise and a clear (src: %s)", len(got), srcEvRule)
	}
	for i, tr := range got {
		e := tr.Event
		if e == nil || e.ID != "dip-20260301T100010.000000Z" || e.Kind != events.Dip || e.DurationS != 0.12 ||
			e.ExtremeV != 120 || len(e.Channels) != 2 || e.Channels[0] != "va" {
			t.Errorf("transition %d event: %+v, want the dip's id, kind, 0.12 s, 120 V on va, vb (src: evAt's invented event)", i, e)
		}
	}
}

// TestEventRuleRestart: state survives a restart as for record rules; a
// raised rule is not raised again, and one raised by an event the previous
// process never closed clears off_delay after the first record.
func TestEventRuleRestart(t *testing.T) {
	r := Rule{Name: "supply-dip", Metric: MetricEvent, Target: Target{Channel: -1}, OffDelay: 10 * time.Minute}
	_, e := runEvents(t, r, nil, []evStep{evs(evAt(events.Dip, 10, 0.12)), rec(300)})
	st := e.States()
	b, err := json.Marshal(st)
	if err != nil {
		t.Fatal(err)
	}
	var back map[string]State
	if err := json.Unmarshal(b, &back); err != nil {
		t.Fatal(err)
	}
	// after the restart: a new dip does not raise again; the timer runs from its end
	got, _ := runEvents(t, r, back, []evStep{rec(303), evs(evAt(events.Dip, 400, 0.1)), rec(606), rec(609), rec(997), rec(1000)})
	if len(got) != 1 || got[0].Raised || !got[0].Time.Equal(secs(1003)) {
		t.Errorf("after restart: %+v, want only the clear at 1003 s (src: %s; 400.1 + 600 = 1000.1)", got, srcEvRule)
	}
	// restored raised without a timer (an event open at a crash): cleared
	// off_delay after the first record's start
	crash := map[string]State{"supply-dip": {Raised: true, Since: secs(13.8), Value: 0}}
	got, _ = runEvents(t, r, crash, []evStep{rec(2000), rec(2594), rec(2597), rec(2600)})
	if len(got) == 1 && (got[0].Event != nil || !math.IsNaN(got[0].Value) || !math.IsNaN(got[0].Threshold)) {
		t.Errorf("clear after a crash: %+v, want no event and NaN value and threshold (src: Transition doc: the event is not known after a restart)", got[0])
	}
	if len(got) != 1 || got[0].Raised || !got[0].Time.Equal(secs(2600)) {
		t.Errorf("after a crash: %+v, want the clear at 2600 s (src: README 'Alarm rules': off_delay from the start of the first record after the restart; 2000 + 600)", got)
	}
}

// TestEventRuleKindsCopied: New keeps its own copy of a rule's kinds, so
// Rules reports what was configured whatever the caller does with its
// slice later (common practice, no source).
func TestEventRuleKindsCopied(t *testing.T) {
	kinds := []events.Kind{events.Dip}
	e, err := New([]Rule{{Name: "ev", Metric: MetricEvent, Kinds: kinds, Target: Target{Channel: -1}}}, northWeir(t, 1), nil)
	if err != nil {
		t.Fatal(err)
	}
	kinds[0] = events.Swell
	if got := e.Rules()[0].Kinds; len(got) != 1 || got[0] != events.Dip {
		t.Errorf("Rules kinds %v after the caller changed its slice, want [dip]", got)
	}
}

func TestEventRuleValidation(t *testing.T) {
	base := Rule{Name: "ev", Metric: MetricEvent, Target: Target{Channel: -1}}
	with := func(f func(*Rule)) Rule { r := base; f(&r); return r }
	tests := []struct {
		name string
		rule Rule
		want error
	}{
		{"any kind, any channel", base, nil},
		{"a voltage channel", with(func(r *Rule) { r.Target.Channel = chVB }), nil},
		{"a current channel", with(func(r *Rule) { r.Target.Channel = chIA }), ErrTarget},
		{"a channel out of range", with(func(r *Rule) { r.Target.Channel = 99 }), ErrTarget},
		{"a threshold", with(func(r *Rule) { r.Above, r.Threshold = true, 90 }), ErrRule},
		{"a deadband", with(func(r *Rule) { r.Deadband = 1 }), ErrRule},
		{"a harmonic", with(func(r *Rule) { r.Harmonic = 5 }), ErrRule},
		{"a min load", with(func(r *Rule) { r.MinLoad = 10; r.LoadChannels = []int{chIA} }), ErrRule},
		{"a baseline", with(func(r *Rule) { r.Baseline = &Baseline{Learn: time.Hour, Base: 100} }), ErrRule},
		{"a phase", with(func(r *Rule) { r.Target.Phase = 'a' }), ErrTarget},
		{"a negative off delay", with(func(r *Rule) { r.OffDelay = -time.Second }), ErrRule},
		{"an invalid kind", with(func(r *Rule) { r.Kinds = []events.Kind{9} }), ErrRule},
	}
	for _, tc := range tests {
		t.Run(tc.name, func(t *testing.T) {
			_, err := New([]Rule{tc.rule}, northWeir(t, 1, 5), nil)
			if !errors.Is(err, tc.want) || (tc.want == nil) != (err == nil) {
				t.Errorf("New: %v, want %v (src: Rule doc: event rules take kinds, a voltage channel and delays only)", err, tc.want)
			}
		})
	}
}

// later returns the later of a and b.
func later(a, b time.Time) time.Time {
	if b.After(a) {
		return b
	}
	return a
}

// FuzzEventRule feeds arbitrary sequences of dips, swells, open and ended
// interruptions and 3 s records to an event rule on dips and interruptions
// and checks the Evaluator.Event doc: transitions alternate starting with
// a raise; a raise comes from a matching event, a clear from a record, never
// while an open event holds the rule, and never before OffDelay past the
// end of the last event that raised or held it; and a raised rule with no
// open event clears once records pass that time.
func FuzzEventRule(f *testing.F) {
	f.Add([]byte{1, 0, 0, 0, 2, 0, 0, 3, 0, 0, 0})
	f.Add([]byte{2, 0, 1, 5, 3, 0, 0, 0, 0, 0, 0, 0, 0})
	f.Fuzz(func(t *testing.T, data []byte) {
		const off = 30 * time.Second
		ru := Rule{Name: "f", Metric: MetricEvent, Kinds: []events.Kind{events.Dip, events.Interruption},
			Target: Target{Channel: -1}, OffDelay: off}
		e, err := New([]Rule{ru}, northWeir(t, 1), nil)
		if err != nil {
			t.Fatal(err)
		}
		if len(data) > 500 {
			data = data[:500]
		}
		now := t0                        // end of the last record
		var last time.Time               // end of the last event that raised or held the rule
		var openStart, openEnd time.Time // the open interruption's start and how far it was reported lasting
		// each detector machine's events follow one another: the end of
		// the last dip or interruption, and of the last swell
		var dipEnd, swellEnd time.Time
		raised := false
		check := func(trs []Transition, fromEvent bool) {
			for _, tr := range trs {
				switch {
				case tr.Raised == raised:
					t.Fatalf("transition %+v repeats the state", tr)
				case tr.Raised != fromEvent:
					t.Fatalf("transition %+v from the wrong input (event %v)", tr, fromEvent)
				case !tr.Raised && !openStart.IsZero():
					t.Fatalf("cleared at %v while an open event holds the rule", tr.Time)
				case !tr.Raised && tr.Time.Sub(last) < off:
					t.Fatalf("cleared at %v, %v after the last event ended", tr.Time, tr.Time.Sub(last))
				}
				raised = tr.Raised
			}
		}
		for _, b := range data {
			d := time.Duration(b>>2) * 20 * time.Millisecond
			var ev *Event
			op := b & 3
			if op == 1 && !openStart.IsZero() {
				op = 0 // dips and interruptions are one detector machine: no dip while an interruption is open
			}
			switch op {
			case 0:
				check(e.Evaluate(&metrics.Record{Interval: metrics.Int3s, Start: now, DurationS: 3}, nil), false)
				now = now.Add(3 * time.Second)
				continue
			case 1:
				ev = &Event{Kind: events.Dip, Start: later(now, dipEnd), DurationS: d.Seconds()}
			case 2:
				ev = &Event{Kind: events.Swell, Start: later(now, swellEnd), DurationS: d.Seconds()}
			case 3:
				if openStart.IsZero() {
					openStart = later(now, dipEnd)
					ev = &Event{Kind: events.Interruption, Start: openStart, DurationS: d.Seconds(), Open: true}
					openEnd = ev.End()
				} else { // it ends no earlier than it was reported lasting, nor before now
					end := now
					if openEnd.After(end) {
						end = openEnd
					}
					ev = &Event{Kind: events.Interruption, Start: openStart, DurationS: end.Add(d).Sub(openStart).Seconds()}
					openStart = time.Time{}
				}
			}
			if ev.Kind == events.Swell {
				swellEnd = ev.End()
			} else {
				dipEnd = later(dipEnd, ev.End())
				last = later(last, ev.End())
			}
			check(e.Event(ev, nil), true)
		}
		if raised && openStart.IsZero() {
			end := last.Add(off + 3*time.Second)
			for ; !now.After(end) && raised; now = now.Add(3 * time.Second) {
				check(e.Evaluate(&metrics.Record{Interval: metrics.Int3s, Start: now, DurationS: 3}, nil), false)
			}
			if raised {
				t.Fatalf("still raised at %v, past the last end %v + off_delay", now, last)
			}
		}
	})
}
