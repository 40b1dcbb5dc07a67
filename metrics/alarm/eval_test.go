package alarm

import (
	"encoding/json"
	"errors"
	"math"
	"slices"
	"testing"
	"time"

	"github.com/gridloupe/gridloupe/metrics"
)

// valTol compares transition values, which are copied, not computed.
const valTol = 1e-12

// Sources of the check values in this file.
const (
	srcDesign = "DESIGN.md 'Daemon keys' alarm rules: delays on sample time, null holds, min load quiet"
	srcClock  = "closed form: record k (from 0) of 200 ms spans 0.2·k to 0.2·(k+1) s; a delay D completes at the first record ending ≥ D after the start of the first record that met the condition (the condition has then held for D)"
	srcBand   = "DESIGN.md: deadband in metric units; clear only beyond threshold ∓ deadband"
	src519    = "IEEE 519-2014 Table 2, ISC/IL 20<50: 5th 7 % of IL [confirmed 1992 values; 2014 from memory]"
	srcNoSrc  = "common practice, no source"
)

// ev is an expected transition: at record index, raised or cleared.
type ev struct {
	at     int
	raised bool
}

func TestEvaluateSemantics(t *testing.T) {
	tddIA := Rule{Name: "tdd-ia", Metric: MetricTDDH50, Target: Target{Channel: chIA},
		Level: metrics.Int200ms, Above: true, Threshold: 8, Severity: "warning"}
	with := func(r Rule, f func(*Rule)) Rule { f(&r); return r }

	tests := []struct {
		name  string
		rule  Rule
		vals  []float64 // one per 200 ms record; NaN = null
		loads []float64 // current RMS per record, A; nil = 100 A
		want  []ev
		src   string
	}{
		{
			name: "on delay 0 raises on the first record",
			rule: tddIA, vals: []float64{9}, want: []ev{{0, true}},
			src: srcDesign + "; Evaluator doc: OnDelay 0 → transition on the first record",
		},
		{
			name: "value equal to threshold does not raise",
			rule: tddIA, vals: []float64{8, 8, 8}, want: nil,
			src: "README, Alarm rules: raise when value > Threshold (strict)",
		},
		{
			name: "on delay 1 s raises at 1 s of sample time, not before",
			rule: with(tddIA, func(r *Rule) { r.OnDelay = time.Second }),
			vals: []float64{9, 9, 9, 9, 9, 9, 9}, want: []ev{{4, true}},
			src: srcClock + ": held from 0 s, record 4 ends 1.0 s",
		},
		{
			name: "a value below threshold restarts the on delay",
			rule: with(tddIA, func(r *Rule) { r.OnDelay = time.Second }),
			vals: []float64{9, 9, 9, 9, 7, 9, 9, 9, 9, 9, 9}, want: []ev{{9, true}},
			src: srcClock + ": restart at record 5 (from 1.0 s), raise at record 9 (ends 2.0 s)",
		},
		{
			name: "deadband: oscillation inside the band does not chatter",
			rule: with(tddIA, func(r *Rule) { r.Deadband = 0.5 }),
			vals: []float64{9, 7.8, 8.2, 7.6, 8.4, 7.9, 7.51, 7.4, 7.6, 7.9, 8.0, 7.7, 8.01},
			want: []ev{{0, true}, {7, false}, {12, true}},
			src:  srcBand + ": clear only below 7.5, raise only above 8",
		},
		{
			name: "off delay 1 s",
			rule: with(tddIA, func(r *Rule) { r.OffDelay = time.Second }),
			vals: []float64{9, 7, 7, 7, 7, 7, 7, 7}, want: []ev{{0, true}, {5, false}},
			src: srcClock + ": clear condition held from record 1 (from 0.2 s), cleared at record 5 (ends 1.2 s)",
		},
		{
			name: "off delay: a value inside the band cancels the pending clear",
			rule: with(tddIA, func(r *Rule) { r.OffDelay = time.Second; r.Deadband = 0.5 }),
			vals: []float64{9, 7, 7, 7, 7.7, 7, 7, 7, 7, 7, 7}, want: []ev{{0, true}, {9, false}},
			src: srcBand + "; " + srcClock + ": restart at record 5 (from 1.0 s), clear at record 9 (ends 2.0 s)",
		},
		{
			name: "null holds the raised state",
			rule: tddIA, vals: []float64{9, nan, nan, nan}, want: []ev{{0, true}},
			src: srcDesign,
		},
		{
			name: "null never completes a pending raise by itself",
			rule: with(tddIA, func(r *Rule) { r.OnDelay = time.Second }),
			vals: []float64{9, nan, nan, nan, nan, nan, nan, nan}, want: nil,
			src: srcDesign + "; our choice: transitions only on a valid value",
		},
		{
			name: "null leaves the pending timer untouched",
			rule: with(tddIA, func(r *Rule) { r.OnDelay = time.Second }),
			vals: []float64{9, nan, nan, 9, 9, 9}, want: []ev{{4, true}},
			src: srcDesign + "; " + srcClock + ": timer from record 0 (0 s) runs through the nulls, record 4 ends 1.0 s",
		},
		{
			name:  "min load: light load neither raises nor clears",
			rule:  with(tddIA, func(r *Rule) { r.MinLoad = 32; r.LoadChannels = []int{chIA} }),
			vals:  []float64{9, 9, 9, 7, 7, 7, 9},
			loads: []float64{10, 31.9, 100, 10, nan, 32, 10},
			want:  []ev{{2, true}, {5, false}},
			src:   srcDesign + "; 32 A = 20 % of IL 160 A (closed form); at exactly MinLoad the rule evaluates (our choice)",
		},
		{
			name: "below rule: total PF below 0.90 with 0.02 deadband",
			rule: Rule{Name: "pf", Metric: MetricPF, Target: Target{Channel: -1, Total: true},
				Level: metrics.Int200ms, Threshold: 0.90, Deadband: 0.02},
			vals: []float64{0.95, 0.90, 0.89, 0.91, 0.919, 0.93, 0.91},
			want: []ev{{2, true}, {5, false}},
			src:  srcBand + "; raise below 0.90, clear above 0.92 (" + srcNoSrc + " for the 0.90 figure)",
		},
		{
			name: "phase b dpf below 0.85",
			rule: Rule{Name: "dpf-b", Metric: MetricDPF, Target: Target{Channel: -1, Phase: 'b'},
				Level: metrics.Int200ms, Threshold: 0.85},
			vals: []float64{0.9, 0.84, 0.86}, want: []ev{{1, true}, {2, false}},
			src: srcDesign + "; " + srcNoSrc + " for the 0.85 figure",
		},
		{
			name: "per-harmonic pct_il: 5th above the 7 % limit",
			rule: Rule{Name: "h5-ia", Metric: MetricPctIL, Harmonic: 5, Target: Target{Channel: chIA},
				Level: metrics.Int200ms, Above: true, Threshold: 7, Deadband: 0.2},
			vals: []float64{6.9, 7.0, 7.2, 6.9, 6.7},
			want: []ev{{2, true}, {4, false}},
			src:  src519 + "; " + srcBand,
		},
		{
			name: "per-harmonic pct: 5th of va above 5 %",
			rule: Rule{Name: "h5-va", Metric: MetricPct, Harmonic: 5, Target: Target{Channel: chVA},
				Level: metrics.Int200ms, Above: true, Threshold: 5},
			vals: []float64{4, 5.5}, want: []ev{{1, true}},
			src: "IEEE 519-2014 Table 1, ≤ 1 kV individual 5 % [confirmed]",
		},
		{
			name: "crest factor of ia above 2.5, a metric from the quantity table",
			rule: Rule{Name: "cf-ia", Metric: "crest_factor", Target: Target{Channel: chIA},
				Level: metrics.Int200ms, Above: true, Threshold: 2.5, Deadband: 0.2},
			vals: []float64{1.9, 2.7, 2.4, nan, 2.2}, want: []ev{{1, true}, {4, false}},
			src: srcBand + "; " + srcNoSrc + " for 2.5 (a drive current's short conduction pulses)",
		},
		{
			name: "frequency below 49.5 Hz",
			rule: Rule{Name: "f", Metric: MetricFreq, Target: Target{Channel: -1},
				Level: metrics.Int200ms, Threshold: 49.5},
			vals: []float64{50, 49.4, nan, 50}, want: []ev{{1, true}, {3, false}},
			src: srcDesign + "; " + srcNoSrc + " for 49.5 Hz",
		},
		{
			name: "voltage unbalance above 2 %",
			rule: Rule{Name: "unb", Metric: MetricUnbalanceV, Target: Target{Channel: -1},
				Level: metrics.Int200ms, Above: true, Threshold: 2},
			vals: []float64{1, 2.5}, want: []ev{{1, true}},
			src: srcNoSrc + " (2 % is a common planning figure)",
		},
	}
	for _, tc := range tests {
		t.Run(tc.name, func(t *testing.T) {
			s := northWeir(t)
			e, err := New([]Rule{tc.rule}, s, nil)
			if err != nil {
				t.Fatal(err)
			}
			recs := series(s, metrics.Int200ms, 0.2, len(tc.vals), 100)
			var got []ev
			var trs []Transition
			for k, r := range recs {
				put(t, s, r, tc.rule, tc.vals[k])
				if tc.loads != nil {
					r.Channels[chIA].RMS = tc.loads[k]
				}
				n := len(trs)
				trs = e.Evaluate(r, trs)
				for _, tr := range trs[n:] {
					got = append(got, ev{k, tr.Raised})
					wantT := r.Start.Add(200 * time.Millisecond)
					if !tr.Time.Equal(wantT) || math.Abs(tr.Value-tc.vals[k]) > valTol ||
						tr.Rule != tc.rule.Name || tr.Threshold != tc.rule.Threshold || tr.Metric != tc.rule.Metric {
						t.Errorf("record %d: transition %+v; want time %v value %v", k, tr, wantT, tc.vals[k])
					}
				}
			}
			if !slices.Equal(got, tc.want) {
				t.Errorf("transitions %v; want %v (%s)", got, tc.want, tc.src)
			}
		})
	}
}

func TestEvaluateLevelFilter(t *testing.T) {
	s := northWeir(t)
	ru := Rule{Name: "tdd", Metric: MetricTDDH50, Target: Target{Channel: chIA},
		Level: metrics.Int10min, Above: true, Threshold: 8}
	e, err := New([]Rule{ru}, s, nil)
	if err != nil {
		t.Fatal(err)
	}
	r := series(s, metrics.Int3s, 3, 1, 100)[0]
	put(t, s, r, ru, 20)
	if trs := e.Evaluate(r, nil); len(trs) != 0 { // Evaluate doc: only rules whose Level == r.Interval
		t.Fatalf("3 s record raised a 10 min rule: %+v", trs)
	}
	r.Interval = metrics.Int10min
	r.DurationS = 600
	trs := e.Evaluate(r, nil)
	// DESIGN.md "Time": sample time = start + duration_s.
	if len(trs) != 1 || !trs[0].Time.Equal(t0.Add(10*time.Minute)) || trs[0].Level != metrics.Int10min {
		t.Fatalf("10 min record: %+v", trs)
	}
	if got := e.Active(); !slices.Equal(got, []string{"tdd"}) {
		t.Errorf("Active %v", got)
	}
}

// TestRestart checks that restored states resume (README, Alarm rules: a raised alarm is
// not re-raised; a pending timer continues from PendingSince), through the
// JSON form the store persists.
func TestRestart(t *testing.T) {
	s := northWeir(t)
	rules := []Rule{
		{Name: "raised", Metric: MetricTDDH50, Target: Target{Channel: chIA}, Level: metrics.Int200ms,
			Above: true, Threshold: 8},
		{Name: "pending", Metric: MetricTDDH50, Target: Target{Channel: chIB}, Level: metrics.Int200ms,
			Above: true, Threshold: 8, OnDelay: time.Second},
	}
	recs := series(s, metrics.Int200ms, 0.2, 8, 100)
	for _, r := range recs {
		r.Channels[chIA].TDDH50Pct, r.Channels[chIB].TDDH50Pct = 9, 9
	}
	a, err := New(rules, s, nil)
	if err != nil {
		t.Fatal(err)
	}
	var trs []Transition
	for _, r := range recs[:3] { // raised raises at record 0; pending starts at record 0 (0.2 s)
		trs = a.Evaluate(r, trs)
	}
	if len(trs) != 1 || trs[0].Rule != "raised" {
		t.Fatalf("before restart: %+v", trs)
	}
	blob, err := json.Marshal(a.States())
	if err != nil {
		t.Fatalf("States not JSON-serialisable: %v", err)
	}
	var restored map[string]State
	if err := json.Unmarshal(blob, &restored); err != nil {
		t.Fatal(err)
	}
	restored["gone"] = State{Raised: true} // a rule removed from the config is ignored
	b, err := New(rules, s, restored)
	if err != nil {
		t.Fatal(err)
	}
	if got := b.Active(); !slices.Equal(got, []string{"raised"}) {
		t.Fatalf("Active after restart %v", got)
	}
	trs = trs[:0]
	var at []int
	for k, r := range recs[3:] {
		n := len(trs)
		trs = b.Evaluate(r, trs)
		if len(trs) > n {
			at = append(at, k+3)
		}
	}
	// srcClock: pending since the start of record 0 (0 s) → raised at record 4 (ends 1.0 s).
	if len(trs) != 1 || trs[0].Rule != "pending" || !slices.Equal(at, []int{4}) {
		t.Fatalf("after restart: %+v at %v; want only pending at record 4 (%s)", trs, at, srcClock)
	}
	st := b.States()["raised"]
	if !st.Raised || !st.Since.Equal(t0.Add(200*time.Millisecond)) {
		t.Errorf("restored state %+v lost its Since", st)
	}
}

func TestClockStepBack(t *testing.T) {
	s := northWeir(t)
	ru := Rule{Name: "tdd", Metric: MetricTDDH50, Target: Target{Channel: chIA}, Level: metrics.Int200ms,
		Above: true, Threshold: 8, OnDelay: time.Second}
	e, err := New([]Rule{ru}, s, nil)
	if err != nil {
		t.Fatal(err)
	}
	recs := series(s, metrics.Int200ms, 0.2, 12, 100)
	for _, r := range recs {
		put(t, s, r, ru, 9)
	}
	var trs []Transition
	trs = e.Evaluate(recs[10], trs) // pending since 2.0 s
	for _, r := range recs[:4] {    // time steps back: records from 0 to 0.8 s
		trs = e.Evaluate(r, trs)
	}
	// Our choice (documented on Evaluator): the timer restarts at 0 s (the
	// start of record 0), so record 3, ending 0.8 s, is too early; record 4
	// (ends 1.0 s) raises.
	if len(trs) != 0 {
		t.Fatalf("raised after a backward step: %+v", trs)
	}
	if trs = e.Evaluate(recs[4], trs); len(trs) != 1 {
		t.Fatalf("not raised 1 s after the restart of the timer (%s)", srcClock)
	}
}

func TestNewErrors(t *testing.T) {
	ok := Rule{Name: "x", Metric: MetricTHDH50, Target: Target{Channel: chVA}, Level: metrics.Int10min,
		Above: true, Threshold: 8}
	with := func(f func(*Rule)) Rule { r := ok; f(&r); return r }
	tests := []struct {
		name  string
		setup *metrics.Setup
		rules []Rule
		want  error
		src   string
	}{
		{"no name", nil, []Rule{with(func(r *Rule) { r.Name = "" })}, ErrRule, srcNoSrc},
		{"duplicate", nil, []Rule{ok, ok}, ErrDuplicate, "DESIGN.md: rule names are unique (store key)"},
		{"unknown metric", nil, []Rule{with(func(r *Rule) { r.Metric = "thd" })}, ErrMetric, "DESIGN.md record key names"},
		{"bad level", nil, []Rule{with(func(r *Rule) { r.Level = 9 })}, ErrRule, "DESIGN.md: interval labels are a closed set"},
		{"NaN threshold", nil, []Rule{with(func(r *Rule) { r.Threshold = math.NaN() })}, ErrRule, srcNoSrc},
		{"negative deadband", nil, []Rule{with(func(r *Rule) { r.Deadband = -1 })}, ErrRule, srcBand},
		{"negative delay", nil, []Rule{with(func(r *Rule) { r.OffDelay = -time.Second })}, ErrRule, srcNoSrc},
		{"channel out of range", nil, []Rule{with(func(r *Rule) { r.Target.Channel = 6 })}, ErrTarget, srcNoSrc},
		{"tdd on a voltage", nil, []Rule{with(func(r *Rule) { r.Metric = MetricTDD })}, ErrTarget,
			"DESIGN.md: TDD uses IL, a current quantity"},
		{"pct_il without IL", noIL(t), []Rule{with(func(r *Rule) {
			r.Metric, r.Harmonic, r.Target.Channel = MetricPctIL, 5, chIA
		})}, ErrTarget, "DESIGN.md: pct_il only for currents with IL configured"},
		{"h50 without all orders", northWeir(t, 1, 5, 7), []Rule{ok}, ErrTarget,
			"DESIGN.md: rules needing h50 values are config errors without harmonics: all"},
		{"harmonic not computed", northWeir(t, 1, 5, 7), []Rule{with(func(r *Rule) {
			r.Metric, r.Harmonic = MetricPct, 11
		})}, ErrTarget, "DESIGN.md: unrequested orders are absent"},
		{"harmonic 1", nil, []Rule{with(func(r *Rule) { r.Metric, r.Harmonic = MetricPct, 1 })}, ErrTarget,
			"DESIGN.md: pct of the fundamental is always 100"},
		{"pf phase and total", nil, []Rule{with(func(r *Rule) {
			r.Metric, r.Target = MetricPF, Target{Channel: -1, Phase: 'a', Total: true}
		})}, ErrTarget, srcNoSrc},
		{"pf unknown phase", nil, []Rule{with(func(r *Rule) {
			r.Metric, r.Target = MetricPF, Target{Channel: -1, Phase: 'n'}
		})}, ErrTarget, "DESIGN.md: phases with both a voltage and a current"},
		{"unbalance single-phase", singlePhase(t), []Rule{{Name: "u", Metric: MetricUnbalanceV,
			Level: metrics.Int10min, Threshold: 2, Above: true}}, ErrTarget,
			"DESIGN.md: single-phase has no sequence or unbalance"},
		{"min load without channels", nil, []Rule{with(func(r *Rule) { r.MinLoad = 10 })}, ErrTarget, srcDesign},
		{"load channel is a voltage", nil, []Rule{with(func(r *Rule) {
			r.MinLoad, r.LoadChannels = 10, []int{chVA}
		})}, ErrTarget, srcDesign},
	}
	for _, tc := range tests {
		t.Run(tc.name, func(t *testing.T) {
			s := tc.setup
			if s == nil {
				s = northWeir(t)
			}
			_, err := New(tc.rules, s, nil)
			if !errors.Is(err, tc.want) {
				t.Fatalf("New: %v; want %v (%s)", err, tc.want, tc.src)
			}
		})
	}
	if _, err := New(nil, nil, nil); !errors.Is(err, ErrSetup) {
		t.Errorf("nil setup: %v", err)
	}
}

func noIL(tb testing.TB) *metrics.Setup {
	s := *northWeir(tb)
	s.ILA = 0
	out, err := metrics.NewSetup(s)
	if err != nil {
		tb.Fatal(err)
	}
	return out
}

func singlePhase(tb testing.TB) *metrics.Setup {
	s, err := metrics.NewSetup(metrics.Setup{
		Channels: []metrics.Channel{{Name: "v", Kind: metrics.Voltage, Phase: 'a'},
			{Name: "i", Kind: metrics.Current, Phase: 'a'}},
		Orders: []int{1, 3, 5}, Wiring: metrics.SinglePhase, NominalV: 277, Reference: -1,
	})
	if err != nil {
		tb.Fatal(err)
	}
	return s
}

func TestValueAbsentAndMisshapen(t *testing.T) {
	s := northWeir(t)
	rules := []Rule{
		{Name: "h5", Metric: MetricPctIL, Harmonic: 5, Target: Target{Channel: chIA}, Level: metrics.Int200ms, Above: true, Threshold: 7},
		{Name: "pf", Metric: MetricPF, Target: Target{Channel: -1, Total: true}, Level: metrics.Int200ms, Threshold: 0.9},
	}
	e, err := New(rules, s, nil)
	if err != nil {
		t.Fatal(err)
	}
	empty := &metrics.Record{Interval: metrics.Int200ms, DurationS: 0.2}
	for i := range rules { // STYLE.md: no panics on bad input; absent → NaN
		if v := e.Value(i, empty); !math.IsNaN(v) {
			t.Errorf("rule %d on an empty record: %v, want NaN", i, v)
		}
		if trs := e.Evaluate(empty, nil); len(trs) != 0 {
			t.Errorf("transition on an empty record")
		}
	}
	r := series(s, metrics.Int200ms, 0.2, 1, 100)[0]
	r.Channels[chIA].H[4].PctIL = math.Inf(1) // Orders[4] == 5
	if v := e.Value(0, r); !math.IsNaN(v) {
		t.Errorf("Inf value read as %v; want NaN (DESIGN.md: never Inf, treated as null)", v)
	}
	r.Channels[chIA].H[4].PctIL = 7.5
	if v := e.Value(0, r); v != 7.5 {
		t.Errorf("Value %v; want 7.5 (copied from the record)", v)
	}
	if v := e.Value(5, r); !math.IsNaN(v) {
		t.Errorf("rule out of range: %v", v)
	}
	if e.Evaluate(nil, nil) != nil {
		t.Error("nil record")
	}
}
