package sim_test

import (
	"testing"

	"github.com/gridloupe/gridloupe/metrics"
	"github.com/gridloupe/gridloupe/stream/sim"
)

// BenchmarkReadFrames: 8 channels (three voltages, three currents, the
// neutral and a second phase-a CT) at 12.8 kHz; reports samples/s.
func BenchmarkReadFrames(b *testing.B) {
	for _, frames := range []int{256, 2560} {
		b.Run(map[int]string{256: "frames=256", 2560: "frames=2560"}[frames], func(b *testing.B) {
			cfg := sim.DefaultConfig()
			cfg.SampleRate = 12800
			cfg.Channels = append(sim.DefaultChannels(), sim.Chan{Name: "ia2", Kind: metrics.Current, Phase: 'a', Scale: 0.01})
			s := newSource(b, cfg)
			nch := len(cfg.Channels)
			buf := make([]float64, frames*nch)
			b.SetBytes(int64(8 * len(buf))) // 8 bytes per sample
			b.ReportAllocs()
			for b.Loop() {
				if _, err := s.ReadFrames(buf); err != nil {
					b.Fatal(err)
				}
			}
			b.ReportMetric(float64(b.N)*float64(len(buf))/b.Elapsed().Seconds(), "samples/s")
			if s.SampleIndex() == 0 {
				b.Fatal("no frames")
			}
		})
	}
}
