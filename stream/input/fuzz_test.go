package input

import (
	"bytes"
	"errors"
	"testing"
)

// fuzzDstLen is the dst length the fuzz targets read with: not a multiple of
// every channel count, so partial room is exercised too.
const fuzzDstLen = 7

// checkReads reads r until an error, failing on frames beyond the room of dst
// and on a reader that neither delivers nor ends. Bounded by the input size.
func checkReads(t *testing.T, r frameReader, nch, inputLen int) {
	t.Helper()
	dst := make([]float64, fuzzDstLen)
	room := fuzzDstLen / nch
	for range inputLen + 16 {
		n, err := r.ReadFrames(dst)
		if n < 0 || n > room {
			t.Fatalf("ReadFrames returned %d frames, room for %d", n, room)
		}
		if err != nil {
			if n2, err2 := r.ReadFrames(dst); n2 != 0 || err2 == nil {
				t.Fatalf("after error %v: %d frames, %v; want 0 and an error", err, n2, err2)
			}
			return
		}
		if n == 0 {
			t.Fatal("ReadFrames returned 0 frames and no error")
		}
	}
	t.Fatal("more calls than input bytes without an end")
}

func FuzzCSV(f *testing.F) {
	f.Add([]byte("t,va,ia\n0,1,2\n0.5,3,4\n1,5,6\n"), uint8(2))
	f.Add([]byte("# c\r\nva,ia,x\r\n1,2,z\r\nNaN,-Inf,\r\n3"), uint8(2))
	f.Add([]byte("t,va\n0,1\n0.001,2\n0.003,3\n"), uint8(1))
	f.Add([]byte("va;ia\n1,5;2\n"), uint8(1))
	f.Add([]byte("ia,va\n1,2,3\n"), uint8(2))
	f.Add([]byte("\ufeffva\n1e400\n-0\n0x1p-2\n"), uint8(1))
	names := []string{"va", "ia", "ib"}
	f.Fuzz(func(t *testing.T, data []byte, k uint8) {
		want := names[:1+int(k)%len(names)]
		c, err := NewCSV("fuzz.csv", bytes.NewReader(data), want)
		if err != nil {
			var he *HeaderError
			var de *DataError
			if !errors.As(err, &he) && !errors.As(err, &de) {
				t.Fatalf("NewCSV error %v (%T) is neither a header nor a data error", err, err)
			}
			return
		}
		if c.Channels() != len(want) {
			t.Fatalf("Channels() = %d, want %d", c.Channels(), len(want))
		}
		checkReads(t, c, len(want), len(data))
		if c.Offset() < 0 || c.Offset() > int64(len(data)) {
			t.Fatalf("Offset() = %d outside [0, %d]", c.Offset(), len(data))
		}
	})
}

func FuzzWAV(f *testing.F) {
	f.Add(buildWAV(f, wavSpec{format: formatPCM, bits: 16, channels: 2, rate: 8000, dataSize: -1, dataBytes: pcmBytes([]int64{1, -1, 3, 4}, 2)}), uint8(2))
	f.Add(buildWAV(f, wavSpec{format: formatPCM, bits: 24, channels: 1, rate: 8000, dataSize: 9, dataBytes: pcmBytes([]int64{1, -1}, 3)}), uint8(1))
	f.Add(buildWAV(f, wavSpec{format: formatExtensible, sub: formatPCM, bits: 32, valid: 20, channels: 3, rate: 1, dataSize: -1,
		before: [][]byte{chunk("LIST", []byte("abc"))}, dataBytes: pcmBytes([]int64{1 << 12, 2 << 12, 3 << 12}, 4)}), uint8(3))
	f.Add(buildWAV(f, wavSpec{format: formatFloat, bits: 32, channels: 1, rate: 48000, dataSize: unboundedData, dataBytes: floatBytes([]float32{0.5, 1, 2})}), uint8(1))
	f.Add([]byte("RIFF\x00\x00\x00\x00WAVEfmt \x10\x00\x00\x00"), uint8(1))
	f.Fuzz(func(t *testing.T, data []byte, ch uint8) {
		nch := 1 + int(ch)%6
		w, err := NewWAV("fuzz.wav", bytes.NewReader(data), nch)
		if err != nil {
			if !errors.Is(err, ErrHeader) {
				t.Fatalf("NewWAV error %v is not a header error", err)
			}
			return
		}
		if nch > fuzzDstLen {
			return
		}
		checkReads(t, w, nch, len(data))
		if w.Offset() > int64(len(data)) {
			t.Fatalf("Offset() = %d beyond the %d input bytes", w.Offset(), len(data))
		}
	})
}
