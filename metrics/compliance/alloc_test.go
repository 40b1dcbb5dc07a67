//go:build !race

package compliance

import (
	"testing"
	"time"

	"github.com/gridloupe/gridloupe/metrics"
)

// TestAddAllocs proves the per-record path does not allocate, for 3 s
// records within a day and for 10 min records.
func TestAddAllocs(t *testing.T) {
	s := newSetup(t, "abc", nwIL)
	e := newEval(t, s)
	sy := newSynth(s)
	for _, iv := range []metrics.Interval{metrics.Int3s, metrics.Int10min} {
		i := 0
		n := testing.AllocsPerRun(500, func() {
			r := sy.fill(iv, weekStart.Add(time.Duration(i)*time.Second))
			i++
			if err := e.Add(r); err != nil {
				t.Fatal(err)
			}
		})
		if n != 0 {
			t.Errorf("Add(%s): %v allocs per call, want 0", iv, n)
		}
	}
}
