package input

import (
	"io"
	"os"
	"runtime"
	"testing"
)

// TestPeakMemoryLarge measures the heap while a generated CSV of 10 MB and
// 1 GB streams through a reader: memory must not grow with the input. It is a
// measurement, not a CI test: run it with GRIDLOUPE_MEMCHECK=1 and -v.
func TestPeakMemoryLarge(t *testing.T) {
	if os.Getenv("GRIDLOUPE_MEMCHECK") != "1" {
		t.Skip("set GRIDLOUPE_MEMCHECK=1 to measure")
	}
	const (
		fs  = 10240
		nch = 6
		// heapGrowthLimit bounds HeapSys growth across the read: the reader
		// holds a 64 KiB buffer and one second of rows (about 0.7 MB at
		// 10.24 kHz with six channels), so 8 MiB leaves room for the GC's
		// pacing without hiding growth with the input size.
		heapGrowthLimit = 8 << 20
	)
	for _, size := range []int64{10 << 20, 1 << 30} {
		runtime.GC()
		var before, after runtime.MemStats
		runtime.ReadMemStats(&before)
		want := []string{"c0", "c1", "c2", "c3", "c4", "c5"}
		c, err := NewCSV("gen.csv", newCSVGen(fs, nch, 9, size), want)
		if err != nil {
			t.Fatal(err)
		}
		var ms runtime.MemStats
		runtime.ReadMemStats(&ms) // the first second of rows is held now
		peakHeap := ms.HeapInuse
		dst := make([]float64, 1024*nch)
		var frames uint64
		for calls := 0; ; calls++ {
			n, err := c.ReadFrames(dst)
			frames += uint64(n)
			if calls%4096 == 0 {
				runtime.ReadMemStats(&ms)
				peakHeap = max(peakHeap, ms.HeapInuse)
			}
			if err == io.EOF {
				break
			}
			if err != nil {
				t.Fatal(err)
			}
		}
		runtime.ReadMemStats(&after)
		t.Logf("input %d MB, %d frames: HeapSys %.1f → %.1f MiB, Sys %.1f → %.1f MiB, peak HeapInuse %.1f MiB, TotalAlloc +%.1f MiB",
			size>>20, frames,
			mib(before.HeapSys), mib(after.HeapSys), mib(before.Sys), mib(after.Sys),
			mib(peakHeap), mib(after.TotalAlloc-before.TotalAlloc))
		if after.HeapSys > before.HeapSys+heapGrowthLimit {
			t.Errorf("HeapSys grew by %.1f MiB, limit %.1f MiB", mib(after.HeapSys-before.HeapSys), mib(heapGrowthLimit))
		}
	}
}

func mib(b uint64) float64 { return float64(b) / (1 << 20) }
