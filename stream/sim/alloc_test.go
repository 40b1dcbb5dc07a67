//go:build !race

package sim_test

import (
	"testing"
	"time"

	"github.com/gridloupe/gridloupe/stream/sim"
)

func TestReadFramesAllocs(t *testing.T) {
	clk := &fakeClock{now: time.Date(2026, 3, 1, 0, 0, 0, 0, time.UTC)}
	paced := sim.DefaultConfig()
	paced.Speed = 1000
	paced.Now, paced.Sleep = clk.Now, clk.Sleep
	dipping := sim.DefaultConfig()
	dipping.Dips = []sim.Dip{{At: 0, Depth: 0.5, Duration: time.Hour}}
	for _, tc := range []struct {
		name string
		cfg  sim.Config
	}{{"default", sim.DefaultConfig()}, {"paced", paced}, {"in a dip", dipping}} {
		t.Run(tc.name, func(t *testing.T) {
			s := newSource(t, tc.cfg)
			buf := make([]float64, 1000*nDefault) // not a multiple of BlockLen
			if n := testing.AllocsPerRun(100, func() {
				s.SetFilterCondition(0.5) // forces a recompute at the next block
				if _, err := s.ReadFrames(buf); err != nil {
					t.Fatal(err)
				}
				_ = s.Truth()
			}); n != 0 {
				t.Fatalf("ReadFrames: %v allocs per call, want 0", n)
			}
		})
	}
}
