package sim_test

import (
	"errors"
	"math"
	"testing"
	"time"

	"github.com/gridloupe/gridloupe/stream/sim"
)

// FuzzNew: any numeric Config either fails with ErrConfig or yields finite
// frames without panicking (STYLE: no panics on bad input).
func FuzzNew(f *testing.F) {
	f.Add(10240.0, 50.0, 230.0, 6100.0, 160.0, 0.3, int64(time.Hour), 0.5, int64(time.Second), uint64(1), 100)
	f.Add(0.0, 0.0, 0.0, 0.0, 0.0, 0.0, int64(0), 0.0, int64(1), uint64(0), 1)
	f.Add(1201.0, 60.0, 1e6, 1e9, 1e6, 1.0, int64(-1), 2.0, int64(0), uint64(9), 3000)
	f.Fuzz(func(t *testing.T, fs, fn, v, isc, il, worst float64, period int64, depth float64, dur int64, seed uint64, frames int) {
		cfg := sim.Config{
			SampleRate: fs, FrequencyHz: fn, VoltageV: v, IscA: isc, ILA: il, Seed: seed,
			Filter: sim.FilterProfile{Period: time.Duration(period), Worst: worst},
			Dips:   []sim.Dip{{At: time.Duration(dur), Depth: depth, Duration: time.Duration(dur)}},
			Limit:  uint64(frames & 0xfff),
		}
		s, err := sim.New(cfg)
		if err != nil {
			if !errors.Is(err, sim.ErrConfig) {
				t.Fatalf("error %v is not ErrConfig", err)
			}
			return
		}
		buf := make([]float64, 7*1000)
		for range 5 {
			n, err := s.ReadFrames(buf)
			for _, x := range buf[:7*n] {
				if math.IsNaN(x) || math.IsInf(x, 0) {
					t.Fatalf("non-finite sample %v", x)
				}
			}
			if err != nil {
				break
			}
		}
	})
}
