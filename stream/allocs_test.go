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
	chans := []synthChan{
		{tones: []tone{{1, 230, 0}, {5, 7, 40}}, noise: 0.2},
		{tones: []tone{{1, 230, -120}, {5, 7, 160}}, noise: 0.2},
		{tones: []tone{{1, 230, 120}, {5, 7, -80}}, noise: 0.2},
		{tones: []tone{{1, 100, -13}, {5, 30, 150}}, noise: 0.1},
		{tones: []tone{{1, 100, -133}, {5, 30, 270}}, noise: 0.1},
		{tones: []tone{{1, 100, 107}, {5, 30, 30}}, noise: 0.1},
	}
	src := newSynth(fs, constFreq(49.97), 3.1, chans...)
	var data []float64
	buf := make([]float64, 6*512)
	for {
		n, err := src.ReadFrames(buf)
		data = append(data, buf[:n*6]...)
		if err != nil {
			break
		}
	}
	ch := []metrics.Channel{
		{Name: "va", Kind: metrics.Voltage, Phase: 'a'}, {Name: "vb", Kind: metrics.Voltage, Phase: 'b'},
		{Name: "vc", Kind: metrics.Voltage, Phase: 'c'}, {Name: "ia", Kind: metrics.Current, Phase: 'a'},
		{Name: "ib", Kind: metrics.Current, Phase: 'b'}, {Name: "ic", Kind: metrics.Current, Phase: 'c'},
	}
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
