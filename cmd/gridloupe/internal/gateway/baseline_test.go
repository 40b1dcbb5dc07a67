package gateway

import (
	"context"
	"errors"
	"path/filepath"
	"testing"
	"time"

	"github.com/gridloupe/gridloupe/metrics"
	"github.com/gridloupe/gridloupe/metrics/alarm"
	"github.com/gridloupe/gridloupe/store"
	"github.com/gridloupe/gridloupe/stream"
	"github.com/gridloupe/gridloupe/stream/sim"
)

// ageingRule: ia's TDD 3 points of IL above its commissioning baseline at
// the same load, learned over the first 2 simulated minutes of 3 s values
// (a test rule: the simulator's reactor wears within minutes; common
// practice, no source).
func ageingRule() alarm.Rule {
	return alarm.Rule{Name: "reactor-ageing", Metric: alarm.MetricTDD, Target: alarm.Target{Channel: 1}, Level: metrics.Int3s,
		Above: true, Threshold: 3, Deadband: 1, OnDelay: 30 * time.Second, OffDelay: 30 * time.Second, Severity: "warning",
		Baseline: &alarm.Baseline{Learn: 2 * time.Minute, Base: 160}}
}

// runAgeing runs the single-phase simulated cabinet at 80 % load for 12
// simulated minutes with the given reactor profile and the ageing rule,
// against a real store; it returns the transitions and the store.
func runAgeing(t *testing.T, path string, filter sim.FilterProfile, restored map[string]alarm.State) ([]alarm.Transition, *store.DB) {
	t.Helper()
	r := newRig(t, path, 1) // setup and store of the rig; its own source is replaced
	const fs, seconds = 6400.0, 12 * 60
	src, err := sim.New(sim.Config{SampleRate: fs, FrequencyHz: 50, VoltageV: 230, IscA: 6100, ILA: 160,
		Channels: []sim.Chan{{Name: "va", Kind: metrics.Voltage, Phase: 'a'}, {Name: "ia", Kind: metrics.Current, Phase: 'a'}},
		Start:    t0, Filter: filter, Seed: 5, Limit: uint64(seconds * fs)})
	if err != nil {
		t.Fatal(err)
	}
	src.SetLoad(0.8)
	ev, err := alarm.New([]alarm.Rule{ageingRule()}, r.setup, restored)
	if err != nil {
		t.Fatal(err)
	}
	var trans []alarm.Transition
	g, err := New(Config{Pipeline: stream.Config{Setup: r.setup, SampleRate: fs, NominalHz: 50, Base: t0},
		Source: src, EndIsError: true, Store: r.db, Alarms: ev, CommitEvery: 20 * time.Millisecond,
		OnTransition: func(tr alarm.Transition) { trans = append(trans, tr) }})
	if err != nil {
		t.Fatal(err)
	}
	if err := g.Run(context.Background()); !errors.Is(err, ErrSourceEnded) {
		t.Fatalf("Run: %v", err)
	}
	return trans, r.db
}

// TestBaselineOnWearingReactor: on the simulator's reactor that wears from
// healthy (condition 1) towards 0.3 over 20 minutes, the baseline rule
// learns the healthy TDD in its first 2 minutes and raises once the TDD
// has crept 3 points above it, long before any fixed limit a healthy
// six-pulse cabinet already exceeds; with a reactor that stays healthy it
// never raises. The learned baseline is stored with the alarm state and
// survives a restart (sim: stream/sim FilterProfile).
func TestBaselineOnWearingReactor(t *testing.T) {
	t.Parallel()
	dir := t.TempDir()
	trans, db := runAgeing(t, filepath.Join(dir, "worn.db"), sim.FilterProfile{Period: 40 * time.Minute, Worst: 0.3}, nil)
	if len(trans) == 0 || !trans[0].Raised {
		t.Fatalf("transitions %+v; want a raise as the reactor wears", trans)
	}
	tr := trans[0]
	if tr.Value-tr.Threshold <= 0 || tr.Time.Sub(t0) < 2*time.Minute {
		t.Errorf("raised at %v with %v above threshold %v; want after the learning period, above the threshold", tr.Time.Sub(t0), tr.Value, tr.Threshold)
	}
	states, err := db.AlarmStates()
	if err != nil {
		t.Fatal(err)
	}
	st := FromStore(states)["reactor-ageing"]
	if !st.Learned.Done || st.Learned.From.IsZero() {
		t.Fatalf("stored baseline %+v; want a finished learning period", st.Learned)
	}
	var n uint32
	for _, b := range st.Learned.Bins {
		n += b.N
	}
	// 2 min of 3 s values: 40 (src: hand, 120 s / 3 s)
	if n < 39 || n > 41 {
		t.Errorf("baseline learned %d values, want about 40", n)
	}
	// a restart keeps the baseline and the raised state: the run that
	// starts healthy again clears within the first 2 minutes (its off
	// delay), which it could not do while learning a new baseline
	trans2, _ := runAgeing(t, filepath.Join(dir, "again.db"), sim.FilterProfile{Period: 40 * time.Minute, Worst: 0.3},
		map[string]alarm.State{"reactor-ageing": st})
	if len(trans2) == 0 || trans2[0].Raised || trans2[0].Time.Sub(t0) >= 2*time.Minute {
		t.Errorf("after a restart with the stored state: %+v; want a clear within 2 min (no second raise first, no relearning)", trans2)
	}

	healthy, _ := runAgeing(t, filepath.Join(dir, "healthy.db"), sim.FilterProfile{}, nil)
	if len(healthy) != 0 {
		t.Errorf("healthy reactor: transitions %+v, want none", healthy)
	}
}
