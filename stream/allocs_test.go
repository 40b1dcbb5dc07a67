//go:build !race

package stream

import (
	"context"
	"testing"

	"github.com/gridloupe/gridloupe/metrics"
)

// TestPipelineAllocs: once built, the pipeline allocates nothing per
// sample or per window: calibration, tracking, Goertzel banks, metrics,
// and 3 s / 10 min aggregation all reuse their buffers (STYLE.md §5).
func TestPipelineAllocs(t *testing.T) {
	const fs = 10240.0
	data, ch := sixChannels(fs, 3.1, 49.97)
	s := setupOf(t, metrics.Wye, 230, 160, true, nil, ch...)
	p, err := New(Config{Setup: s, SampleRate: fs, NominalHz: 50})
	if err != nil {
		t.Fatal(err)
	}
	iv := NewIntervals(s, metrics.Int200ms, metrics.Int3s, metrics.Int10min)
	var n int
	sink := func(*metrics.Record) error { n++; return nil }
	emit := func(r *metrics.Record) error { return iv.Add(r, sink) }
	m := &memSource{data: data, nch: 6}
	ctx := context.Background()
	allocs := testing.AllocsPerRun(5, func() {
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
}
