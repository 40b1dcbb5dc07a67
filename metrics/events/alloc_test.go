//go:build !race

package events

import "testing"

func TestWriteAllocs(t *testing.T) {
	const fs, f = 10240.0, 50.02
	d := newDet(t, fs, f, 3, 256, nil)
	sig := signal(fs, f, 230, 2, 3, []step{{0, 0.3, 0.5, 100}, {1, 1.1, 1.3, 270}})
	off := 0
	n := testing.AllocsPerRun(200, func() {
		if off+256 > len(sig[0]) {
			off = 0
		}
		d.SetFrequency(f, true)
		d.Write(sig, off, 256)
		for _, ok := d.Next(); ok; _, ok = d.Next() {
		}
		_ = d.Overlaps(uint64(off), uint64(off+256))
		off += 256
	})
	if n != 0 {
		t.Fatalf("Write: %v allocs per call, want 0", n)
	}
}
