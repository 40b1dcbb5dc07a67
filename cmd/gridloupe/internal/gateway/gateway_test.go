package gateway

import (
	"context"
	"encoding/json"
	"errors"
	"path/filepath"
	"sync"
	"testing"
	"time"

	"github.com/gridloupe/gridloupe/metrics"
	"github.com/gridloupe/gridloupe/metrics/alarm"
	"github.com/gridloupe/gridloupe/store"
	"github.com/gridloupe/gridloupe/stream"
	"github.com/gridloupe/gridloupe/stream/sim"
)

var t0 = time.Date(2026, 3, 1, 10, 0, 0, 0, time.UTC)

// rig is a gateway on a simulated single-phase cabinet (va, ia) with a
// real bbolt store.
type rig struct {
	setup *metrics.Setup
	db    *store.DB
	src   *sim.Source
	path  string
}

func newRig(t *testing.T, path string, seconds float64) *rig {
	t.Helper()
	s, err := metrics.NewSetup(metrics.Setup{
		Channels: []metrics.Channel{{Name: "va", Kind: metrics.Voltage, Phase: 'a'}, {Name: "ia", Kind: metrics.Current, Phase: 'a'}},
		Orders:   []int{1, 5, 7, 11, 13}, Wiring: metrics.SinglePhase, NominalV: 230, ILA: 160, Reference: 0})
	if err != nil {
		t.Fatal(err)
	}
	const fs = 6400.0
	src, err := sim.New(sim.Config{SampleRate: fs, FrequencyHz: 50, VoltageV: 230, IscA: 6100, ILA: 160,
		Channels: []sim.Chan{{Name: "va", Kind: metrics.Voltage, Phase: 'a'}, {Name: "ia", Kind: metrics.Current, Phase: 'a'}},
		Start:    t0, Filter: sim.FilterProfile{Period: 2 * time.Minute, Worst: 0.2}, Seed: 3,
		Limit: uint64(seconds * fs)})
	if err != nil {
		t.Fatal(err)
	}
	src.SetLoad(0.8)
	db, err := store.Open(store.Options{Path: path, NoSync: true})
	if err != nil {
		t.Fatal(err)
	}
	t.Cleanup(func() { db.Close() })
	if err := db.SetLayout(s); err != nil {
		t.Fatal(err)
	}
	return &rig{setup: s, db: db, src: src, path: path}
}

// thdRule raises when the current THD of the 3 s values exceeds 60 % for
// 10 s of sample time (a demo threshold, common practice, no source).
func thdRule() alarm.Rule {
	return alarm.Rule{Name: "ia-thd", Metric: "thd_pct", Target: alarm.Target{Channel: 1}, Level: metrics.Int3s,
		Above: true, Threshold: 60, Deadband: 3, OnDelay: 10 * time.Second, OffDelay: 10 * time.Second, Severity: "warning"}
}

func (r *rig) gateway(t *testing.T, ev *alarm.Evaluator, now func() time.Time, onT func(alarm.Transition)) *Gateway {
	t.Helper()
	g, err := New(Config{
		Pipeline: stream.Config{Setup: r.setup, SampleRate: 6400, NominalHz: 50, Base: t0},
		Source:   r.src, EndIsError: true, Store: r.db, Alarms: ev,
		Telemetry: []metrics.Interval{metrics.Int10min}, Summary: []metrics.Interval{metrics.Int10min}, Base: "gridloupe/test-site/gw1", Site: "test-site", Gateway: "gw1",
		CommitEvery: 20 * time.Millisecond, Now: now, OnTransition: onT})
	if err != nil {
		t.Fatal(err)
	}
	return g
}

// TestGatewayStoresAndAlarms: a simulated reactor that wears and recovers
// raises and clears the alarm; every transition is in the outbox with its
// seq, the aggregates are stored in time order, and the source ending is
// reported as ErrSourceEnded.
func TestGatewayStoresAndAlarms(t *testing.T) {
	r := newRig(t, filepath.Join(t.TempDir(), "g.db"), 150)
	ev, err := alarm.New([]alarm.Rule{thdRule()}, r.setup, nil)
	if err != nil {
		t.Fatal(err)
	}
	var trans []alarm.Transition
	g := r.gateway(t, ev, nil, func(tr alarm.Transition) { trans = append(trans, tr) })
	err = g.Run(context.Background())
	if !errors.Is(err, ErrSourceEnded) {
		t.Fatalf("Run: %v, want ErrSourceEnded when the simulator stops", err)
	}
	if len(trans) < 2 || !trans[0].Raised || trans[1].Raised {
		t.Fatalf("transitions %+v, want raised then cleared as the reactor wears and recovers", trans)
	}
	// 150 s = 50 blocks of 3 s; the last is partial or full
	var n3 int
	var last time.Time
	if err := r.db.Query(metrics.Int3s, time.Time{}, time.Time{}, func(rec *metrics.Record) error {
		if rec.Start.Before(last) {
			t.Errorf("stored 3 s records out of time order: %v after %v", rec.Start, last)
		}
		last = rec.Start
		n3++
		return nil
	}); err != nil {
		t.Fatal(err)
	}
	if n3 < 49 || n3 > 51 {
		t.Errorf("%d stored 3 s records, want 50 for 150 s (15 windows of 10 cycles each)", n3)
	}
	msgs, err := r.db.Pending(0, 100)
	if err != nil {
		t.Fatal(err)
	}
	var alarms int
	for _, m := range msgs {
		if m.Topic == "gridloupe/test-site/gw1/alarm" {
			alarms++
			var p map[string]any
			if err := json.Unmarshal(m.Payload, &p); err != nil {
				t.Fatalf("alarm payload not JSON: %v: %s", err, m.Payload)
			}
			for _, k := range []string{"site", "gateway", "time", "alarm", "state", "metric", "level", "value", "threshold", "severity", "text"} {
				if _, ok := p[k]; !ok {
					t.Errorf("alarm payload lacks %q: %s", k, m.Payload)
				}
			}
			if m.QoS != 1 {
				t.Errorf("alarm QoS %d, want 1 (DESIGN)", m.QoS)
			}
			if p["channel"] != "ia" { // thdRule watches channel 1, ia (README "MQTT topics and payloads", …/alarm row)
				t.Errorf("alarm payload channel %v, want ia: %s", p["channel"], m.Payload)
			}
		}
	}
	if alarms != len(trans) {
		t.Errorf("%d alarm messages in the outbox, %d transitions", alarms, len(trans))
	}
}

// TestRestartKeepsAlarmState: a raised alarm survives a restart without a
// second raise, and the new run does not rewrite stored aggregates.
func TestRestartKeepsAlarmState(t *testing.T) {
	path := filepath.Join(t.TempDir(), "g.db")
	r := newRig(t, path, 45) // long enough to raise (THD rises past 60 % in the first minute)
	ev, _ := alarm.New([]alarm.Rule{thdRule()}, r.setup, nil)
	var first []alarm.Transition
	_ = r.gateway(t, ev, nil, func(tr alarm.Transition) { first = append(first, tr) }).Run(context.Background())
	if len(first) != 1 || !first[0].Raised {
		t.Fatalf("first run: %+v, want one raise", first)
	}
	before := r.db.Stats().Records[metrics.Int3s]
	saved, err := r.db.AlarmStates()
	if err != nil {
		t.Fatal(err)
	}
	r.db.Close()

	r2 := newRig(t, path, 6)
	r2.src.SetFilterCondition(0.2) // still worn: the alarm stays raised
	ev2, err := alarm.New([]alarm.Rule{thdRule()}, r2.setup, FromStore(saved))
	if err != nil {
		t.Fatal(err)
	}
	var second []alarm.Transition
	_ = r2.gateway(t, ev2, nil, func(tr alarm.Transition) { second = append(second, tr) }).Run(context.Background())
	if len(second) != 0 {
		t.Errorf("after restart: %+v, want no transition (the alarm was already raised)", second)
	}
	if act := ev2.Active(); len(act) != 1 {
		t.Errorf("active after restart %v, want [ia-thd]", act)
	}
	if after := r2.db.Stats().Records[metrics.Int3s]; after < before+1 {
		t.Errorf("3 s records %d after restart, %d before: the new run must add, never rewrite", after, before)
	}
}

// TestWallClockSteps: the wall clock jumping ±1 h mid-run (injected)
// neither rewrites nor reorders stored data: record times come from the
// sample clock, keys carry a sequence number, and retention (7 days here)
// deletes nothing young.
func TestWallClockSteps(t *testing.T) {
	r := newRig(t, filepath.Join(t.TempDir(), "g.db"), 60)
	var mu sync.Mutex
	calls := 0
	now := func() time.Time {
		mu.Lock()
		defer mu.Unlock()
		calls++
		switch {
		case calls%3 == 1:
			return t0.Add(time.Hour)
		case calls%3 == 2:
			return t0.Add(-time.Hour)
		}
		return t0
	}
	g := r.gateway(t, nil, now, nil)
	_ = g.Run(context.Background())
	if _, err := r.db.Prune(t0.Add(time.Hour)); err != nil {
		t.Fatal(err)
	}
	var starts []time.Time
	_ = r.db.Query(metrics.Int3s, time.Time{}, time.Time{}, func(rec *metrics.Record) error {
		starts = append(starts, rec.Start)
		return nil
	})
	if len(starts) < 19 {
		t.Fatalf("%d records after 60 s, want 20", len(starts))
	}
	for i := 1; i < len(starts); i++ {
		if !starts[i].After(starts[i-1]) {
			t.Errorf("record %d at %v not after %v", i, starts[i], starts[i-1])
		}
	}
	if starts[0] != t0 {
		t.Errorf("first record at %v, want the sample clock's base %v", starts[0], t0)
	}
}

// failingStore fails CommitAlarm a number of times, then behaves like the
// real store it wraps (a card that returns write errors for a while).
type failingStore struct {
	*store.DB
	fails int
}

func (f *failingStore) CommitAlarm(st store.AlarmState, m store.Message) (uint64, error) {
	if f.fails > 0 {
		f.fails--
		return 0, errors.New("injected: write error")
	}
	return f.DB.CommitAlarm(st, m)
}

// TestAlarmCommitRetried: a transition whose commit fails is kept and
// committed, in order, once the store works again; none is lost (README "The gateway": alarm
// transitions are committed at once; a failed commit once dropped one).
func TestAlarmCommitRetried(t *testing.T) {
	r := newRig(t, filepath.Join(t.TempDir(), "g.db"), 150)
	ev, err := alarm.New([]alarm.Rule{thdRule()}, r.setup, nil)
	if err != nil {
		t.Fatal(err)
	}
	var trans []alarm.Transition
	var storeErrs int
	g, err := New(Config{
		Pipeline: stream.Config{Setup: r.setup, SampleRate: 6400, NominalHz: 50, Base: t0},
		Source:   r.src, Store: &failingStore{DB: r.db, fails: 3}, Alarms: ev,
		Base: "gridloupe/test-site/gw1", Site: "test-site", Gateway: "gw1",
		CommitEvery: 20 * time.Millisecond, OnTransition: func(tr alarm.Transition) { trans = append(trans, tr) },
		OnStoreError: func(err error) {
			if err != nil {
				storeErrs++
			}
		}})
	if err != nil {
		t.Fatal(err)
	}
	_ = g.Run(context.Background())
	if len(trans) < 2 || storeErrs == 0 {
		t.Fatalf("%d transitions, %d store errors: the test needs both", len(trans), storeErrs)
	}
	msgs, err := r.db.Pending(0, 100)
	if err != nil {
		t.Fatal(err)
	}
	var states []string
	for _, m := range msgs {
		var p map[string]any
		if err := json.Unmarshal(m.Payload, &p); err == nil && m.Topic == "gridloupe/test-site/gw1/alarm" {
			states = append(states, p["state"].(string))
		}
	}
	if len(states) != len(trans) {
		t.Fatalf("%d alarm messages in the outbox for %d transitions: %v", len(states), len(trans), states)
	}
	for i, tr := range trans {
		if want := map[bool]string{true: "raised", false: "cleared"}[tr.Raised]; states[i] != want {
			t.Errorf("message %d is %q, transition %d was %q: order lost", i, states[i], i, want)
		}
	}
	saved, err := r.db.AlarmStates()
	if err != nil {
		t.Fatal(err)
	}
	if got, want := saved["ia-thd"].Raised, trans[len(trans)-1].Raised; got != want {
		t.Errorf("stored state raised=%v, last transition raised=%v", got, want)
	}
}

// TestTwoHourNotDuplicatedAfterRestart: a run stopped in the last 10 min
// slot stores the 2 h value; a restart inside that slot must not store a
// second one for the same interval.
func TestTwoHourNotDuplicatedAfterRestart(t *testing.T) {
	r := newRig(t, filepath.Join(t.TempDir(), "g.db"), 1)
	start := time.Date(2026, 3, 1, 0, 0, 0, 0, time.UTC)
	mk := func(iv metrics.Interval, at time.Duration, dur float64) *metrics.Record {
		rec := metrics.NewRecord(r.setup)
		rec.Interval, rec.Start, rec.DurationS, rec.Samples = iv, start.Add(at), dur, uint64(dur*6400)
		return rec
	}
	var stored []*metrics.Record
	for i := range 12 {
		stored = append(stored, mk(metrics.Int10min, time.Duration(i)*10*time.Minute, 600))
	}
	stored = append(stored, mk(metrics.Int2h, 0, 7200))
	if err := r.db.PutAggregates(stored); err != nil {
		t.Fatal(err)
	}
	g, err := New(Config{Pipeline: stream.Config{Setup: r.setup, SampleRate: 6400, NominalHz: 50, Base: start.Add(116 * time.Minute)},
		Source: r.src, Store: r.db})
	if err != nil {
		t.Fatal(err)
	}
	var twoH []*metrics.Record
	g.cfg.OnRecord = func(rec *metrics.Record, _ []string) {
		if rec.Interval == metrics.Int2h {
			twoH = append(twoH, rec.Clone())
		}
	}
	iv := stream.NewIntervals(r.setup, metrics.Int2h)
	g.seed2h(iv)
	emit := func(rec *metrics.Record) error { g.handle(rec.Clone()); return nil }
	// the restarted run's 10 min values reach the 2 h level as Intervals closes them
	_ = iv.Seed(mk(metrics.Int10min, 116*time.Minute, 240), emit) // its partial last slot
	_ = iv.Seed(mk(metrics.Int10min, 120*time.Minute, 600), emit) // the next interval opens normally
	if len(twoH) != 0 {
		t.Errorf("%d 2 h values emitted for an interval already stored", len(twoH))
	}
	_ = iv.Flush(emit)
	if len(twoH) != 1 || !twoH[0].Start.Equal(start.Add(2*time.Hour)) || twoH[0].Samples != 600*6400 {
		t.Errorf("after Flush: %d 2 h values, want the next interval's, holding one 10 min value", len(twoH))
	}
}
