package pcm

import (
	"bytes"
	"errors"
	"io"
	"testing"
	"testing/iotest"

	"github.com/gridloupe/gridloupe/stream/input"
)

// frames makes n interleaved frames of nch channels with distinct values.
func frames(n, nch int) []float64 {
	v := make([]float64, n*nch)
	for i := range v {
		v[i] = float64((i*7919)%20001 - 10000)
	}
	return v
}

func readAll(t *testing.T, r interface {
	ReadFrames([]float64) (int, error)
}, nch, block int) ([]float64, error) {
	t.Helper()
	var out []float64
	dst := make([]float64, block*nch)
	for range 1 << 20 {
		n, err := r.ReadFrames(dst)
		out = append(out, dst[:n*nch]...)
		if err != nil {
			return out, err
		}
	}
	t.Fatal("reader never ended")
	return nil, nil
}

// TestRawReaders: bare PCM arrives the same through any read pattern: one
// byte per read, data together with io.EOF, one frame per call.
func TestRawReaders(t *testing.T) {
	const nch = 3
	want := frames(1000, nch)
	for _, f := range []Format{S16LE, S24LE, S32LE, F32LE} {
		b := make([]byte, len(want)*f.Bytes())
		f.Encode(b, want)
		for _, rc := range []struct {
			name  string
			r     func() io.Reader
			block int
		}{
			{"whole", func() io.Reader { return bytes.NewReader(b) }, 512},
			{"one byte per read", func() io.Reader { return iotest.OneByteReader(bytes.NewReader(b)) }, 512},
			{"data with EOF", func() io.Reader { return iotest.DataErrReader(bytes.NewReader(b)) }, 7},
			{"one frame per call", func() io.Reader { return bytes.NewReader(b) }, 1},
		} {
			t.Run(f.String()+"/"+rc.name, func(t *testing.T) {
				r, err := NewRaw("in", rc.r(), nch, f)
				if err != nil {
					t.Fatal(err)
				}
				got, err := readAll(t, r, nch, rc.block)
				if err != io.EOF {
					t.Fatalf("end: %v, want io.EOF", err)
				}
				if len(got) != len(want) {
					t.Fatalf("%d values, want %d", len(got), len(want))
				}
				for i := range got {
					if got[i] != want[i] {
						t.Fatalf("value %d = %v, want %v", i, got[i], want[i])
					}
				}
			})
		}
	}
}

// TestRawCut: a stream ending inside a frame delivers the whole frames and
// then an error wrapping input.ErrTruncated with the byte offset.
func TestRawCut(t *testing.T) {
	b := make([]byte, 10*2*2+3)
	r, _ := NewRaw("cap.raw", bytes.NewReader(b), 2, S16LE)
	got, err := readAll(t, r, 2, 64)
	if len(got) != 20 || !errors.Is(err, input.ErrTruncated) {
		t.Fatalf("%d values, err %v; want 20 and ErrTruncated", len(got), err)
	}
	if want := "cap.raw: offset 40: stream ends 3 bytes into a 4-byte frame"; err.Error()[:len(want)] != want {
		t.Errorf("message %q, want it to start %q", err, want)
	}
}

// TestRawReadError: a failing reader's error comes after the frames read
// before it, with the name and offset.
func TestRawReadError(t *testing.T) {
	boom := errors.New("device gone")
	r, _ := NewRaw("dev", io.MultiReader(bytes.NewReader(make([]byte, 8)), iotest.ErrReader(boom)), 2, S16LE)
	got, err := readAll(t, r, 2, 64)
	if len(got) != 4 || !errors.Is(err, boom) {
		t.Fatalf("%d values, err %v; want 4 and the read error", len(got), err)
	}
}

// TestRawBadArgs: unusable formats and channel counts are refused.
func TestRawBadArgs(t *testing.T) {
	if _, err := NewRaw("x", nil, 2, Format(9)); !errors.Is(err, ErrFormat) {
		t.Errorf("format 9: %v", err)
	}
	if _, err := NewRaw("x", nil, 0, S16LE); !errors.Is(err, ErrFormat) {
		t.Errorf("0 channels: %v", err)
	}
	r, _ := NewRaw("x", bytes.NewReader(nil), 4, S16LE)
	if _, err := r.ReadFrames(make([]float64, 3)); err != io.ErrShortBuffer {
		t.Errorf("short dst: %v, want io.ErrShortBuffer", err)
	}
}
