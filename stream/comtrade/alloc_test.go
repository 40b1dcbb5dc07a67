//go:build !race

package comtrade

import (
	"bytes"
	"testing"
)

// TestReadAllocs: reading binary and ASCII records allocates nothing per
// frame in steady state (STYLE.md §5).
func TestReadAllocs(t *testing.T) {
	var rows []record
	for i := range 4000 {
		rows = append(rows, record{ts: uint32(i * 98), counts: []float64{float64(i%2000 - 1000), float64(i % 300)}, dig: uint16(i & 1)})
	}
	for _, ft := range []string{ASCII, Binary, Binary32, Float32} {
		c, err := ParseConfig("rec.cfg", []byte(cfgFor(ft, len(rows))))
		if err != nil {
			t.Fatal(err)
		}
		d, _ := NewReader(c, "rec.dat", bytes.NewReader(encodeDat(ft, rows)), []int{0, 1})
		dst := make([]float64, 2*16)
		if a := testing.AllocsPerRun(100, func() { _, _ = d.ReadFrames(dst) }); a != 0 {
			t.Errorf("%s: %v allocs per 16 frames, want 0", ft, a)
		}
	}
}
