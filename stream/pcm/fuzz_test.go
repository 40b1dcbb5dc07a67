package pcm

import (
	"bytes"
	"errors"
	"io"
	"testing"

	"github.com/gridloupe/gridloupe/stream"
)

// FuzzGLF1: any byte stream ends (io.EOF, ErrTruncated, ErrFormat or a
// read error) without a panic, delivers whole frames only, and never
// reports more good frames than it could hold. Seeds: testdata/fuzz/FuzzGLF1
// and the frames below.
func FuzzGLF1(f *testing.F) {
	var buf bytes.Buffer
	w, _ := NewGLF1Writer(&buf, 2, S16LE)
	_ = w.Write(frames(50, 2), 16)
	f.Add(buf.Bytes())
	b := append([]byte(nil), buf.Bytes()...)
	b[30] ^= 1
	f.Add(b)
	f.Add([]byte("GLF1GLF1GLF1"))
	f.Fuzz(func(t *testing.T, data []byte) {
		r, err := NewGLF1("fuzz", bytes.NewReader(data), 2, S16LE)
		if err != nil {
			t.Fatal(err)
		}
		dst := make([]float64, 2*37)
		total := 0
		for i := 0; ; i++ {
			if i > len(data)+10 {
				t.Fatal("reader does not end")
			}
			n, err := r.ReadFrames(dst)
			total += n
			var g *stream.Gap
			if errors.As(err, &g) {
				if g.Missing == 0 {
					t.Fatal("gap of 0 frames")
				}
				continue
			}
			if err != nil {
				if err != io.EOF && !errors.Is(err, ErrFormat) && n != 0 {
					t.Fatalf("frames with a final error: %d, %v", n, err)
				}
				break
			}
		}
		if total*2*2 > len(data) {
			t.Fatalf("%d frames from %d bytes", total, len(data))
		}
	})
}

// FuzzRaw: any byte stream and channel count give whole frames, then the end.
func FuzzRaw(f *testing.F) {
	f.Add([]byte{1, 2, 3, 4, 5, 6, 7}, uint8(2), uint8(2))
	f.Fuzz(func(t *testing.T, data []byte, nch, code uint8) {
		r, err := NewRaw("fuzz", bytes.NewReader(data), int(nch%8)+1, Format(code%4+1))
		if err != nil {
			t.Fatal(err)
		}
		dst := make([]float64, 64)
		total := 0
		for i := 0; ; i++ {
			if i > len(data)+10 {
				t.Fatal("reader does not end")
			}
			n, err := r.ReadFrames(dst)
			total += n
			if err != nil {
				break
			}
		}
		if align := (int(nch%8) + 1) * Format(code%4+1).Bytes(); total != len(data)/align {
			t.Fatalf("%d frames from %d bytes of %d-byte frames", total, len(data), align)
		}
	})
}
