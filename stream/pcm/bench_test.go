package pcm

import (
	"bytes"
	"testing"
)

// BenchmarkReaders: decoding throughput of six-channel streams, for the
// README's performance notes (frames of 256 samples for GLF1).
func BenchmarkReaders(b *testing.B) {
	const nch = 6
	vals := frames(4096, nch)
	raw := make([]byte, len(vals)*2)
	S16LE.Encode(raw, vals)
	var framed bytes.Buffer
	w, _ := NewGLF1Writer(&framed, nch, S16LE)
	_ = w.Write(vals, 256)
	dst := make([]float64, 512*nch)
	b.Run("raw-s16le", func(b *testing.B) {
		r, _ := NewRaw("loop", &loop{b: raw}, nch, S16LE)
		b.SetBytes(512 * nch * 2)
		b.ReportAllocs()
		for b.Loop() {
			for got := 0; got < 512; {
				n, _ := r.ReadFrames(dst[got*nch:])
				got += n
			}
		}
	})
	b.Run("glf1-s16le", func(b *testing.B) {
		g, _ := NewGLF1("loop", &loop{b: framed.Bytes()}, nch, S16LE)
		b.SetBytes(512 * nch * 2)
		b.ReportAllocs()
		for b.Loop() {
			for got := 0; got < 512; {
				n, _ := g.ReadFrames(dst[got*nch:])
				got += n
			}
		}
	})
}
