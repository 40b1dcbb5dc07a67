//go:build !race

package stream

import (
	"context"
	"testing"
	"time"

	"github.com/gridloupe/gridloupe/metrics"
	"github.com/gridloupe/gridloupe/metrics/events"
)

// TestPipelineAllocs: once built, the pipeline allocates nothing per
// sample or per window: calibration, tracking, Goertzel banks, metrics,
// and 3 s / 10 min aggregation all reuse their buffers (STYLE.md §5).
func TestPipelineAllocs(t *testing.T) {
	const fs = 10240.0
	data, ch := sixChannels(fs, 3.1, 49.97)
	s := setupOf(t, metrics.Wye, 230, 160, true, nil, ch...)
	// start 5 s before a 10-minute tick: the warm-up run covers 3.1 s, so
	// the first measured run crosses the tick and closes a 10 min value
	// (and a 3 s block cut by the tick)
	base := time.Date(2026, 3, 1, 9, 59, 55, 0, time.UTC)
	ec := events.DefaultConfig() // event detection on, as under run and replay
	p, err := New(Config{Setup: s, SampleRate: fs, NominalHz: 50, Base: base, Events: &ec})
	if err != nil {
		t.Fatal(err)
	}
	iv := NewIntervals(s, metrics.Int200ms, metrics.Int3s, metrics.Int10min)
	var n int
	var tens int
	var crossed bool
	sink := func(r *metrics.Record) error {
		n++
		if r.Interval == metrics.Int10min {
			tens++
		}
		return nil
	}
	emit := func(r *metrics.Record) error { return iv.Add(r, sink) }
	m := &memSource{data: data, nch: 6}
	ctx := context.Background()
	warm := true
	allocs := testing.AllocsPerRun(5, func() {
		if !warm {
			tensBefore := tens
			defer func() { crossed = crossed || tens > tensBefore }()
		}
		warm = false
		m.pos = 0
		if err := p.Run(ctx, m, emit); err != nil {
			t.Fatal(err)
		}
	})
	if allocs != 0 {
		t.Errorf("%v allocations per 3 s of six channels, want 0", allocs)
	}
	if n == 0 {
		t.Fatal("no records")
	}
	if !crossed {
		t.Fatal("no 10 min value closed in a measured run: the tick was not crossed there")
	}
}
