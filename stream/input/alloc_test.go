//go:build !race

package input

import (
	"bytes"
	"io"
	"testing"
)

// allocRuns is the number of ReadFrames calls averaged by AllocsPerRun.
const allocRuns = 100

func TestCSVReadFramesAllocs(t *testing.T) {
	const nch, block = 6, 64
	data := make([]byte, csvBytes(t, 10240, nch, 9, 10240+2*(allocRuns+2)*block))
	if _, err := io.ReadFull(newCSVGen(10240, nch, 9, 0), data); err != nil {
		t.Fatal(err)
	}
	// With a t column every row is parsed and checked for uniformity; the
	// first second is held by NewCSV, so read past it before measuring.
	c, err := NewCSV("a.csv", bytes.NewReader(data), []string{"c5", "c0", "c3"})
	if err != nil {
		t.Fatal(err)
	}
	dst := make([]float64, 3*block)
	for range 10240/block + 1 {
		if _, err := c.ReadFrames(dst); err != nil {
			t.Fatal(err)
		}
	}
	var rerr error
	allocs := testing.AllocsPerRun(allocRuns, func() {
		if n, err := c.ReadFrames(dst); n != block || err != nil {
			rerr = err
		}
	})
	if rerr != nil {
		t.Fatal(rerr)
	}
	if allocs != 0 {
		t.Fatalf("CSV.ReadFrames: %v allocs per call, want 0", allocs)
	}
}

func TestWAVReadFramesAllocs(t *testing.T) {
	const nch, block = 6, 512
	for _, bits := range []int{16, 24, 32} {
		vals := make([]int64, nch*block*(allocRuns+2))
		for i := range vals {
			vals[i] = int64(i % 1000)
		}
		s := wavSpec{format: formatPCM, bits: bits, channels: nch, rate: 10240, dataSize: -1, dataBytes: pcmBytes(vals, bits/8)}
		w, err := NewWAV("a.wav", bytes.NewReader(buildWAV(t, s)), nch)
		if err != nil {
			t.Fatal(err)
		}
		dst := make([]float64, nch*block)
		var rerr error
		allocs := testing.AllocsPerRun(allocRuns, func() {
			if n, err := w.ReadFrames(dst); n != block || err != nil {
				rerr = err
			}
		})
		if rerr != nil {
			t.Fatal(rerr)
		}
		if allocs != 0 {
			t.Fatalf("WAV.ReadFrames (%d-bit): %v allocs per call, want 0", bits, allocs)
		}
	}
}
