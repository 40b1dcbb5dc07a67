package compliance

import (
	"runtime"
	"testing"
	"time"

	"github.com/gridloupe/gridloupe/metrics"
)

// BenchmarkAdd3s measures one 3 s record of a three-phase wye setup (3 V +
// 3 I channels, all 50 orders: 297 quantities).
func BenchmarkAdd3s(b *testing.B) {
	s := newSetup(b, "abc", nwIL)
	e := newEval(b, s)
	sy := newSynth(s)
	b.ReportAllocs()
	i := 0
	for b.Loop() {
		r := sy.fill(metrics.Int3s, weekStart.Add(time.Duration(i%Day3sValues)*3*time.Second))
		i++
		if err := e.Add(r); err != nil {
			b.Fatal(err)
		}
	}
	if e.days[0].Records == 0 {
		b.Fatal("nothing added")
	}
}

// TestMemory measures the heap an evaluator of 3 V + 3 I channels with all
// orders holds, and bounds it: a tail of 577 float32 per quantity for the
// day and 101 for the week (our design: 297 × 678 × 4 B ≈ 0.8 MB), where
// keeping every 3 s value of a day as float32 would take 297 × 28,800 × 4 B
// ≈ 34 MB.
func TestMemory(t *testing.T) {
	s := newSetup(t, "abc", nwIL)
	var before, after runtime.MemStats
	runtime.GC()
	runtime.ReadMemStats(&before)
	e := newEval(t, s)
	runtime.GC()
	runtime.ReadMemStats(&after)
	held := int64(after.HeapAlloc) - int64(before.HeapAlloc)
	const bound = 2 << 20 // our design bound, with margin for the runtime's size classes
	t.Logf("%d quantities, heap held by the evaluator ≈ %d bytes", len(e.qs), held)
	if held > bound {
		t.Errorf("evaluator holds %d bytes, want ≤ %d", held, bound)
	}
	runtime.KeepAlive(e)
}
