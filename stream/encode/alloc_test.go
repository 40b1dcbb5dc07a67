//go:build !race

package encode

import (
	"io"
	"testing"
)

// TestWriteAllocs proves the steady-state writers allocate nothing per
// record (STYLE 5; the race detector changes allocation counts, hence the
// build constraint).
func TestWriteAllocs(t *testing.T) {
	s := buildSetup(t, specWyeAll)
	r := newRecord(s, randFloats(11))
	r.Flags = 0b1011 // some flags, so the names path runs
	r.HasFreq10s, r.Freq10sHz = true, 50.001
	j := NewJSONL(io.Discard, s)
	c := NewCSV(io.Discard, s)
	buf := AppendJSON(nil, s, r)
	for name, f := range map[string]func(){
		"JSONL.Write": func() { _ = j.Write(r) },
		"CSV.Write":   func() { _ = c.Write(r) },
		"AppendJSON":  func() { buf = AppendJSON(buf[:0], s, r) },
		"AppendTime":  func() { buf = AppendTime(buf[:0], r.Start) },
	} {
		f() // grow buffers, write the CSV header
		if n := testing.AllocsPerRun(100, f); n != 0 {
			t.Errorf("%s: %v allocs per record, want 0", name, n)
		}
	}
}

// TestAsyncAllocs: handing a record over allocates nothing once the
// buffers are shaped (STYLE 5), the writing goroutine included.
func TestAsyncAllocs(t *testing.T) {
	s := buildSetup(t, specWyeAll)
	r := newRecord(s, randFloats(11))
	a := NewAsync(NewJSONL(io.Discard, s), s, 3)
	defer a.Close()
	for range 4 {
		_ = a.Write(r) // shape every buffer
	}
	if n := testing.AllocsPerRun(200, func() { _ = a.Write(r) }); n != 0 {
		t.Errorf("Async.Write: %v allocs per record, want 0", n)
	}
	if err := a.Flush(); err != nil {
		t.Fatal(err)
	}
}
