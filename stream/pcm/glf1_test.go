package pcm

import (
	"bytes"
	"encoding/binary"
	"errors"
	"hash/crc32"
	"io"
	"testing"
	"testing/iotest"

	"github.com/gridloupe/gridloupe/stream"
	"github.com/gridloupe/gridloupe/stream/input"
)

// readGLF1 reads r to its end and returns the samples with gaps as NaN
// markers counted in frames: out[i] is the delivered value or, for a
// missing frame, absent and counted in gaps at its position.
func readGLF1(t *testing.T, r *GLF1, nch, block int) (vals []float64, missingAt map[int]uint64, err error) {
	t.Helper()
	missingAt = map[int]uint64{}
	dst := make([]float64, block*nch)
	for range 1 << 20 {
		n, err := r.ReadFrames(dst)
		vals = append(vals, dst[:n*nch]...)
		var g *stream.Gap
		if errors.As(err, &g) {
			missingAt[len(vals)/nch] += g.Missing
			continue
		}
		if err != nil {
			return vals, missingAt, err
		}
	}
	t.Fatal("reader never ended")
	return
}

// glf1Stream encodes frames of per samples; drop lists frame numbers left
// out, corrupt those whose CRC is broken, junk bytes written before a frame.
func glf1Stream(t *testing.T, vals []float64, nch int, f Format, per int, drop, corrupt map[int]bool, junk map[int][]byte) []byte {
	t.Helper()
	var out bytes.Buffer
	w, err := NewGLF1Writer(&out, nch, f)
	if err != nil {
		t.Fatal(err)
	}
	for k := 0; len(vals) > 0; k++ {
		m := min(len(vals), per*nch)
		if drop[k] {
			w.Skip(uint64(m / nch))
			vals = vals[m:]
			continue
		}
		b, err := w.Frame(vals[:m])
		if err != nil {
			t.Fatal(err)
		}
		out.Write(junk[k])
		if corrupt[k] {
			b = append([]byte(nil), b...)
			b[len(b)/2] ^= 0x10
		}
		out.Write(b)
		vals = vals[m:]
	}
	return out.Bytes()
}

// TestGLF1Losses: dropped and corrupted frames are gaps of exactly their
// samples at exactly their place; junk between frames is skipped; every
// other sample arrives unchanged (DESIGN "Sources", GLF1).
func TestGLF1Losses(t *testing.T) {
	const nch, per = 4, 100
	want := frames(1000, nch)
	cases := []struct {
		name          string
		f             Format
		drop, corrupt map[int]bool
		junk          map[int][]byte
		read          func([]byte) io.Reader
		wantBad       uint64
	}{
		{name: "clean s16", f: S16LE},
		{name: "dropped frame s24", f: S24LE, drop: map[int]bool{3: true}},
		{name: "corrupted frame s32", f: S32LE, corrupt: map[int]bool{5: true}, wantBad: 1},
		{name: "junk and a false magic, f32", f: F32LE, junk: map[int][]byte{2: []byte("xxGLF1yyy"), 7: {0, 1, 2}}, wantBad: 1},
		{name: "everything, one byte per read", f: S16LE, drop: map[int]bool{0: false, 8: true}, corrupt: map[int]bool{1: true, 2: true},
			junk: map[int][]byte{4: []byte("GLF")}, wantBad: 2, read: func(b []byte) io.Reader { return iotest.OneByteReader(bytes.NewReader(b)) }},
	}
	for _, tc := range cases {
		t.Run(tc.name, func(t *testing.T) {
			b := glf1Stream(t, want, nch, tc.f, per, tc.drop, tc.corrupt, tc.junk)
			var rd io.Reader = bytes.NewReader(b)
			if tc.read != nil {
				rd = tc.read(b)
			}
			r, err := NewGLF1("link", rd, nch, tc.f)
			if err != nil {
				t.Fatal(err)
			}
			got, miss, err := readGLF1(t, r, nch, 64)
			if err != io.EOF {
				t.Fatalf("end: %v", err)
			}
			// rebuild the time line: delivered frames plus missing ones
			lost := map[int]bool{}
			for k := range tc.drop {
				lost[k] = tc.drop[k]
			}
			for k := range tc.corrupt {
				lost[k] = lost[k] || tc.corrupt[k]
			}
			gi, pos := 0, 0 // index into got (frames), position on the sender's time line
			for k := 0; k*per < len(want)/nch; k++ {
				n := min(per, len(want)/nch-k*per)
				if lost[k] {
					if k == 0 {
						continue // nothing precedes it: the stream starts at the next frame
					}
					if m := miss[gi]; m < uint64(n) {
						t.Fatalf("frame %d lost: gap %d at delivered frame %d, want %d", k, m, gi, n)
					}
					miss[gi] -= uint64(n)
					pos += n
					continue
				}
				for i := range n * nch {
					if got[gi*nch+i] != want[(pos)*nch+i] {
						t.Fatalf("frame %d value %d = %v, want %v", k, i, got[gi*nch+i], want[pos*nch+i])
					}
				}
				gi += n
				pos += n
			}
			for at, m := range miss {
				if m != 0 {
					t.Errorf("%d extra missing frames reported at %d", m, at)
				}
			}
			if gi*nch != len(got) {
				t.Errorf("%d values delivered, want %d", len(got), gi*nch)
			}
			if st := r.Stats(); st.Bad != tc.wantBad {
				t.Errorf("stats %+v, want %d bad", st, tc.wantBad)
			}
		})
	}
}

// TestGLF1Duplicates: a resent frame is dropped, an overlapping one trimmed,
// a restarted count is a one-sample gap.
func TestGLF1Duplicates(t *testing.T) {
	const nch = 2
	vals := frames(40, nch)
	var buf bytes.Buffer
	w, _ := NewGLF1Writer(&buf, nch, S16LE)
	put := func(idx uint64, seq uint32, from, to int) {
		w.idx, w.seq = idx, seq
		b, _ := w.Frame(vals[from*nch : to*nch])
		buf.Write(b)
	}
	put(0, 0, 0, 10)   // samples 0..9
	put(10, 1, 10, 20) // 10..19
	put(10, 1, 10, 20) // resent
	put(15, 1, 15, 25) // resent with other framing: 20..24 are new
	put(0, 0, 25, 35)  // the sender restarted: index 0, sequence 0
	r, _ := NewGLF1("link", &buf, nch, S16LE)
	got, miss, err := readGLF1(t, r, nch, 64)
	if err != io.EOF {
		t.Fatal(err)
	}
	// 10 + 10 + 5 new + 10 after the restart, one gap of 1 before those
	if len(got) != 35*nch || miss[25] != 1 || len(miss) != 1 {
		t.Fatalf("%d values, gaps %v; want 70 values and a 1-frame gap at 25", len(got), miss)
	}
	for i := range got {
		if got[i] != vals[i] {
			t.Fatalf("value %d = %v, want %v", i, got[i], vals[i])
		}
	}
	if st := r.Stats(); st.Dups != 1 || st.Restarts != 1 {
		t.Errorf("stats %+v, want 1 duplicate and 1 restart", st)
	}
}

// TestGLF1Errors: a frame that does not match the configuration, a cut
// stream, bad arguments.
func TestGLF1Errors(t *testing.T) {
	var buf bytes.Buffer
	w, _ := NewGLF1Writer(&buf, 3, S16LE)
	_ = w.Write(frames(10, 3), 10)
	good := append([]byte(nil), buf.Bytes()...)

	r, _ := NewGLF1("link", bytes.NewReader(good), 2, S16LE)
	if _, _, err := readGLF1(t, r, 2, 64); !errors.Is(err, ErrFormat) {
		t.Errorf("3-channel frames for 2 channels: %v, want ErrFormat", err)
	}
	r, _ = NewGLF1("link", bytes.NewReader(good), 3, S32LE)
	if _, _, err := readGLF1(t, r, 3, 64); !errors.Is(err, ErrFormat) {
		t.Errorf("s16le frames for s32le: %v, want ErrFormat", err)
	}
	r, _ = NewGLF1("link", bytes.NewReader(good[:len(good)-5]), 3, S16LE)
	if got, _, err := readGLF1(t, r, 3, 64); !errors.Is(err, input.ErrTruncated) || len(got) != 0 {
		t.Errorf("cut frame: %d values, %v; want none and ErrTruncated", len(got), err)
	}
	if _, err := NewGLF1("x", nil, 17, S16LE); !errors.Is(err, ErrFormat) {
		t.Errorf("17 channels: %v", err)
	}
	if _, err := w.Frame(make([]float64, 4)); !errors.Is(err, ErrFormat) {
		t.Errorf("4 values for 3 channels: %v", err)
	}
}

// TestGLF1Layout: the bytes of one frame, field by field, as DESIGN's
// table and the README give them (a worked example).
func TestGLF1Layout(t *testing.T) {
	var buf bytes.Buffer
	w, _ := NewGLF1Writer(&buf, 2, S16LE)
	w.seq, w.idx = 7, 0x0102030405
	b, _ := w.Frame([]float64{1, -2, 3, -4})
	want := []byte{'G', 'L', 'F', '1', 1, 2, 2, 0, 7, 0, 0, 0, 5, 4, 3, 2, 1, 0, 0, 0,
		1, 0, 0xFE, 0xFF, 3, 0, 0xFC, 0xFF}
	crc := crc32.ChecksumIEEE(want) // src: hash/crc32, the IEEE polynomial DESIGN names
	want = binary.LittleEndian.AppendUint32(want, crc)
	if !bytes.Equal(b, want) {
		t.Fatalf("frame\n% X\nwant\n% X", b, want)
	}
}
