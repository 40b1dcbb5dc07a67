//go:build !race

package pcm

import (
	"bytes"
	"testing"
)

// TestReadAllocs: steady-state reading allocates nothing per frame, for
// raw and framed streams, gaps included (STYLE.md §5), and memory stays
// constant on an endless stream.
func TestReadAllocs(t *testing.T) {
	const nch = 6
	vals := frames(4096, nch)
	raw := make([]byte, len(vals)*3)
	S24LE.Encode(raw, vals)
	r, _ := NewRaw("loop", &loop{b: raw}, nch, S24LE)
	dst := make([]float64, 512*nch)
	if a := testing.AllocsPerRun(200, func() { _, _ = r.ReadFrames(dst) }); a != 0 {
		t.Errorf("Raw.ReadFrames: %v allocs per call, want 0", a)
	}

	var buf bytes.Buffer
	w, _ := NewGLF1Writer(&buf, nch, F32LE)
	for k := range 16 {
		if k%5 == 4 {
			w.Skip(256) // a lost frame: the reader reports a gap
			continue
		}
		b, _ := w.Frame(vals[k*256*nch : (k+1)*256*nch])
		buf.Write(b)
	}
	// the loop restarts the sender's index: a restart, also a gap
	g, _ := NewGLF1("loop", &loop{b: buf.Bytes()}, nch, F32LE)
	if a := testing.AllocsPerRun(500, func() { _, _ = g.ReadFrames(dst) }); a != 0 {
		t.Errorf("GLF1.ReadFrames: %v allocs per call, want 0", a)
	}
	if st := g.Stats(); st.Missing == 0 || st.Frames < 100 {
		t.Errorf("stats %+v: the loop did not exercise gaps", st)
	}
}
