package stream

import (
	"context"
	"io"
	"testing"

	"github.com/gridloupe/gridloupe/metrics"
)

// memSource replays a pre-generated interleaved buffer, so the benchmark
// measures the pipeline, not the generator.
type memSource struct {
	data []float64
	nch  int
	pos  int
}

func (m *memSource) ReadFrames(dst []float64) (int, error) {
	if m.pos >= len(m.data) {
		return 0, io.EOF
	}
	n := copy(dst[:len(dst)/m.nch*m.nch], m.data[m.pos:])
	m.pos += n
	return n / m.nch, nil
}

// BenchmarkPipeline: six channels (3 V, 3 I) at 10.24 kHz, 10 s per
// iteration, (a) 17 orders and (b) all 50, including frequency tracking,
// metrics and 3 s / 10 min aggregation.
func BenchmarkPipeline(b *testing.B) {
	const fs, secs = 10240.0, 10.0
	data, ch := sixChannels(fs, secs, 50.02)
	for _, bc := range []struct {
		name   string
		all    bool
		orders []int
	}{
		{"17orders", false, []int{1, 5, 7, 11, 13, 17, 19, 23, 25, 29, 31, 35, 37, 41, 43, 47, 49}},
		{"50orders", true, nil},
	} {
		b.Run(bc.name, func(b *testing.B) {
			s := setupOf(b, metrics.Wye, 230, 160, bc.all, bc.orders, ch...)
			samples := len(data)
			b.SetBytes(int64(8 * samples)) // 8 bytes per sample: MB/s converts to samples/s
			b.ReportAllocs()
			var windows uint64
			for b.Loop() {
				p, err := New(Config{Setup: s, SampleRate: fs, NominalHz: 50})
				if err != nil {
					b.Fatal(err)
				}
				iv := NewIntervals(s, metrics.Int3s, metrics.Int10min)
				m := &memSource{data: data, nch: 6}
				if err := p.Run(context.Background(), m, func(r *metrics.Record) error {
					return iv.Add(r, func(*metrics.Record) error { return nil })
				}); err != nil {
					b.Fatal(err)
				}
				windows = p.Windows()
			}
			if windows < 45 {
				b.Fatalf("%d windows", windows)
			}
			nsPerSample := float64(b.Elapsed().Nanoseconds()) / float64(b.N) / float64(samples)
			b.ReportMetric(nsPerSample, "ns/sample")
			b.ReportMetric(1e9/nsPerSample/(fs*6), "x_realtime")
		})
	}
}
