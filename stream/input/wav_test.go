package input

import (
	"bytes"
	"errors"
	"fmt"
	"io"
	"math"
	"slices"
	"strings"
	"testing"
	"testing/iotest"
)

// wavSrc and extSrc name the format documents the decoding follows.
const (
	wavSrc = "RIFF/WAVE format spec: PCM samples are little-endian two's complement in ceil(bits/8) bytes; format 3 is IEEE 754 float"
	extSrc = "WAVE_FORMAT_EXTENSIBLE documentation: wValidBitsPerSample are the most significant bits of the container; value = container >> (container − valid)"
)

func TestWAVDecode(t *testing.T) {
	t.Parallel()
	tests := []struct {
		name  string
		spec  wavSpec
		cont  []int64   // container values written (integer formats)
		fl    []float32 // values written (float formats)
		want  []float64 // raw values delivered
		nch   int
		src   string
		bytes int // container bytes per sample
	}{
		{name: "16-bit PCM", spec: wavSpec{format: formatPCM, bits: 16}, nch: 2, bytes: 2,
			cont: []int64{0, 1, -1, 32767, -32768, 12345},
			want: []float64{0, 1, -1, 32767, -32768, 12345}, src: wavSrc},
		{name: "24-bit PCM", spec: wavSpec{format: formatPCM, bits: 24}, nch: 1, bytes: 3,
			cont: []int64{8388607, -8388608, -1, 1, 123456, -654321},
			want: []float64{8388607, -8388608, -1, 1, 123456, -654321}, src: wavSrc},
		{name: "32-bit PCM", spec: wavSpec{format: formatPCM, bits: 32}, nch: 3, bytes: 4,
			cont: []int64{2147483647, -2147483648, -1, 7, 0, -100000},
			want: []float64{2147483647, -2147483648, -1, 7, 0, -100000}, src: wavSrc},
		{name: "20-bit PCM in 3 bytes", spec: wavSpec{format: formatPCM, bits: 20}, nch: 1, bytes: 3,
			cont: []int64{524287 << 4, -524288 << 4, -1 << 4, 3 << 4},
			want: []float64{524287, -524288, -1, 3}, src: wavSrc + "; samples left-justified, so the count is the container >> 4"},
		{name: "32-bit float", spec: wavSpec{format: formatFloat, bits: 32}, nch: 2,
			fl:   []float32{0.5, -1.25, 3.4e38, -0, 325.25, -1e-7},
			want: []float64{0.5, -1.25, float64(float32(3.4e38)), 0, 325.25, float64(float32(-1e-7))}, src: wavSrc},
		{name: "extensible 16-bit", spec: wavSpec{format: formatExtensible, sub: formatPCM, bits: 16, valid: 16}, nch: 1, bytes: 2,
			cont: []int64{-32768, 32767, 5}, want: []float64{-32768, 32767, 5}, src: extSrc},
		{name: "extensible 24 in 32, valid 24", spec: wavSpec{format: formatExtensible, sub: formatPCM, bits: 32, valid: 24}, nch: 2, bytes: 4,
			cont: []int64{8388607 << 8, -8388608 << 8, -1 << 8, 1<<8 | 0x7F},
			want: []float64{8388607, -8388608, -1, 1}, src: extSrc + "; the low 8 bits (0x7F in the last) are discarded"},
		{name: "extensible 20 in 32, valid 20", spec: wavSpec{format: formatExtensible, sub: formatPCM, bits: 32, valid: 20}, nch: 1, bytes: 4,
			cont: []int64{524287 << 12, -524288 << 12, -1 << 12, 1000 << 12},
			want: []float64{524287, -524288, -1, 1000}, src: extSrc},
		{name: "extensible 12 in 16", spec: wavSpec{format: formatExtensible, sub: formatPCM, bits: 16, valid: 12}, nch: 1, bytes: 2,
			cont: []int64{2047 << 4, -2048 << 4, -1<<4 | 0xF},
			want: []float64{2047, -2048, -1}, src: extSrc},
		{name: "extensible valid 0 means the container", spec: wavSpec{format: formatExtensible, sub: formatPCM, bits: 24, valid: 0}, nch: 1, bytes: 3,
			cont: []int64{-5, 5}, want: []float64{-5, 5}, src: "common practice, no source: a writer that leaves wValidBitsPerSample 0 means all bits"},
		{name: "extensible float", spec: wavSpec{format: formatExtensible, sub: formatFloat, bits: 32, valid: 32}, nch: 1,
			fl: []float32{1.5, -230}, want: []float64{1.5, -230}, src: extSrc},
	}
	for _, tc := range tests {
		t.Run(tc.name, func(t *testing.T) {
			t.Parallel()
			s := tc.spec
			s.channels, s.rate, s.dataSize = tc.nch, 10240, -1
			if tc.fl != nil {
				s.dataBytes = floatBytes(tc.fl)
			} else {
				s.dataBytes = pcmBytes(tc.cont, tc.bytes)
			}
			file := buildWAV(t, s)
			w, err := NewWAV("d.wav", bytes.NewReader(file), tc.nch)
			if err != nil {
				t.Fatal(err)
			}
			if w.SampleRate() != 10240 || w.Channels() != tc.nch {
				t.Errorf("SampleRate %v Channels %d, want 10240 and %d (the fmt chunk)", w.SampleRate(), w.Channels(), tc.nch)
			}
			if w.Remaining() != int64(len(s.dataBytes)) || w.Offset() != int64(len(file)-len(s.dataBytes)) {
				t.Errorf("Remaining %d Offset %d, want %d %d", w.Remaining(), w.Offset(), len(s.dataBytes), len(file)-len(s.dataBytes))
			}
			got, err := readAll(t, w, tc.nch, 1)
			if err != io.EOF || !slices.Equal(got, tc.want) {
				t.Errorf("got %v, %v; want %v, io.EOF (%s)", got, err, tc.want, tc.src)
			}
			if w.Remaining() != 0 || w.Offset() != int64(len(file)) {
				t.Errorf("at the end: Remaining %d Offset %d, want 0 %d", w.Remaining(), w.Offset(), len(file))
			}
		})
	}
}

func TestWAVHeaderErrors(t *testing.T) {
	t.Parallel()
	pcm := func(bits, ch int) wavSpec {
		return wavSpec{format: formatPCM, bits: bits, channels: ch, rate: 12800, dataSize: -1, dataBytes: make([]byte, 2*ch*bits/8)}
	}
	with := func(s wavSpec, f func(*wavSpec)) wavSpec { f(&s); return s }
	tests := []struct {
		name   string
		spec   wavSpec
		raw    []byte // used instead of spec when set
		nch    int
		phrase string
		src    string
	}{
		{name: "8-bit PCM", spec: pcm(8, 1), nch: 1,
			phrase: "8-bit PCM is not supported; use 16, 24 or 32-bit integer or 32-bit float", src: "DESIGN.md: 8-bit formats rejected by name"},
		{name: "64-bit float", spec: with(pcm(64, 1), func(s *wavSpec) { s.format = formatFloat }), nch: 1,
			phrase: "64-bit float is not supported; use 16, 24 or 32-bit integer", src: "DESIGN.md: 64-bit formats rejected by name"},
		{name: "64-bit float, extensible", spec: with(pcm(64, 1), func(s *wavSpec) { s.format, s.sub, s.valid = formatExtensible, formatFloat, 64 }), nch: 1,
			phrase: "64-bit float is not supported", src: "DESIGN.md: 64-bit formats rejected by name"},
		{name: "64-bit integer", spec: pcm(64, 1), nch: 1,
			phrase: "64-bit integer PCM is not supported", src: "DESIGN.md: 64-bit formats rejected by name"},
		{name: "8-bit extensible", spec: with(pcm(8, 1), func(s *wavSpec) { s.format, s.sub, s.valid = formatExtensible, formatPCM, 8 }), nch: 1,
			phrase: "8-bit PCM is not supported", src: "DESIGN.md: 8-bit formats rejected by name"},
		{name: "wrong channel count", spec: pcm(16, 2), nch: 3,
			phrase: "the file has 2 channels, the configuration 3", src: "DESIGN.md: the file's channel count must equal the config's"},
		{name: "A-law", spec: with(pcm(16, 1), func(s *wavSpec) { s.format = 6 }), nch: 1,
			phrase: "format code 0x0006 (A-law) is not supported", src: "RIFF/WAVE format spec: code 6 is A-law"},
		{name: "unknown sub-format", spec: with(pcm(16, 1), func(s *wavSpec) { s.format, s.sub, s.valid = formatExtensible, 2, 16 }), nch: 1,
			phrase: "format code 0x0002", src: extSrc},
		{name: "valid bits above the container", spec: with(pcm(16, 1), func(s *wavSpec) { s.format, s.sub, s.valid = formatExtensible, formatPCM, 20 }), nch: 1,
			phrase: "20 valid bits in a 16-bit container", src: extSrc},
		{name: "bad block align", spec: with(pcm(16, 2), func(s *wavSpec) { s.align = 6 }), nch: 2,
			phrase: "block align 6 does not match 2 channels of 2 bytes", src: "RIFF/WAVE format spec: nBlockAlign = channels × bytes per sample"},
		{name: "rate 0", spec: with(pcm(16, 1), func(s *wavSpec) { s.rate = 0 }), nch: 1,
			phrase: "sample rate of 0 Hz", src: "common practice, no source"},
		{name: "rate 4 GHz", spec: with(pcm(16, 1), func(s *wavSpec) { s.rate = 4_000_000_000 }), nch: 1,
			phrase: "sample rate of 4000000000 Hz; allowed: at most 1000000 Hz", src: "config sample_rate_hz bound (README, Errors), common practice"},
		{name: "rate just above 1 MHz", spec: with(pcm(16, 1), func(s *wavSpec) { s.rate = 1_000_001 }), nch: 1,
			phrase: "allowed: at most 1000000 Hz", src: "config sample_rate_hz bound (README, Errors), common practice"},
		{name: "not RIFF", raw: []byte("OggS\x00\x00\x00\x00WAVEfmt "), nch: 1,
			phrase: "not a RIFF/WAVE file", src: "RIFF/WAVE format spec: the file starts with RIFF"},
		{name: "not WAVE", raw: []byte("RIFF\x04\x00\x00\x00AVI "), nch: 1,
			phrase: `form type is "AVI "`, src: "RIFF/WAVE format spec: form type WAVE"},
		{name: "data before fmt", raw: append([]byte("RIFF\x0c\x00\x00\x00WAVE"), chunk("data", []byte{1, 2})...), nch: 1,
			phrase: "data chunk before the fmt chunk", src: "RIFF/WAVE format spec: fmt precedes data"},
		{name: "no data chunk", raw: append([]byte("RIFF\x00\x00\x00\x00WAVE"), chunk("LIST", []byte("abc"))...), nch: 1,
			phrase: "truncated header", src: "RIFF/WAVE format spec: a WAVE file has a data chunk"},
	}
	for _, tc := range tests {
		t.Run(tc.name, func(t *testing.T) {
			t.Parallel()
			file := tc.raw
			if file == nil {
				file = buildWAV(t, tc.spec)
			}
			_, err := NewWAV("h.wav", bytes.NewReader(file), tc.nch)
			var he *HeaderError
			if !errors.As(err, &he) || !errors.Is(err, ErrHeader) {
				t.Fatalf("err = %v, want *HeaderError (%s)", err, tc.src)
			}
			if !strings.Contains(he.Msg, tc.phrase) || !strings.HasPrefix(err.Error(), fmt.Sprintf("h.wav: offset %d: ", he.Offset)) {
				t.Errorf("err = %q, want %q in it, prefixed with the offset (%s)", err, tc.phrase, tc.src)
			}
		})
	}
}

// TestWAVTruncatedHeader cuts a valid file at every length inside its header:
// each must give a *HeaderError, never a panic or a reader.
func TestWAVTruncatedHeader(t *testing.T) {
	t.Parallel()
	s := wavSpec{format: formatExtensible, sub: formatPCM, bits: 32, valid: 24, channels: 2, rate: 10240, dataSize: -1,
		before: [][]byte{chunk("JUNK", make([]byte, 7))}, dataBytes: make([]byte, 16)}
	file := buildWAV(t, s)
	header := len(file) - len(s.dataBytes)
	for cut := range header {
		_, err := NewWAV("cut.wav", bytes.NewReader(file[:cut]), 2)
		var he *HeaderError
		if !errors.As(err, &he) || !strings.Contains(he.Msg, "truncated header") {
			t.Errorf("cut at %d of %d: err = %v, want a truncated-header *HeaderError", cut, header, err)
		}
	}
}

func TestWAVChunkPadding(t *testing.T) {
	t.Parallel()
	vals := []int64{100, -200, 300, -400}
	s := wavSpec{format: formatPCM, bits: 16, channels: 2, rate: 8000, dataSize: -1, dataBytes: pcmBytes(vals, 2),
		before:  [][]byte{chunk("JUNK", []byte{1, 2, 3})},
		between: [][]byte{chunk("LIST", []byte("INFOISFT\x05\x00\x00\x00test\x00")), chunk("fact", []byte{4, 0, 0, 0, 9})}}
	file := buildWAV(t, s)
	w, err := NewWAV("pad.wav", bytes.NewReader(file), 2)
	if err != nil {
		t.Fatal(err)
	}
	got, err := readAll(t, w, 2, 8)
	// RIFF/WAVE format spec: a chunk of odd size is followed by one pad byte
	// that its size does not count; skipping it lands on the next chunk.
	if err != io.EOF || !slices.Equal(got, []float64{100, -200, 300, -400}) {
		t.Errorf("got %v, %v; want [100 -200 300 -400], io.EOF", got, err)
	}
}

func TestWAVDataEnds(t *testing.T) {
	t.Parallel()
	vals := []int64{1, 2, 3, 4, 5, 6}
	data := pcmBytes(vals, 2) // 3 frames of 2 channels
	tests := []struct {
		name      string
		dataSize  int64 // declared; −1 = real
		keep      int   // data bytes present
		trailer   []byte
		want      []float64
		truncated bool
		src       string
	}{
		{name: "whole", dataSize: -1, keep: 12, want: []float64{1, 2, 3, 4, 5, 6}, src: wavSrc},
		{name: "chunk after data ignored", dataSize: -1, keep: 12, trailer: chunk("LIST", []byte("xyz")),
			want: []float64{1, 2, 3, 4, 5, 6}, src: "RIFF/WAVE format spec: the data chunk's size bounds the samples"},
		{name: "cut at a frame boundary", dataSize: 12, keep: 8, want: []float64{1, 2, 3, 4}, truncated: true,
			src: "declared 12 bytes, 8 present: a cut recording"},
		{name: "cut inside a frame", dataSize: 12, keep: 10, want: []float64{1, 2, 3, 4}, truncated: true,
			src: "declared 12 bytes, 10 present: the partial frame is dropped"},
		{name: "size not whole frames", dataSize: 10, keep: 12, want: []float64{1, 2, 3, 4}, truncated: true,
			src: "RIFF/WAVE format spec: data is whole blocks of nBlockAlign bytes"},
		{name: "streamed size, ends at a frame", dataSize: unboundedData, keep: 12, want: []float64{1, 2, 3, 4, 5, 6},
			src: "common practice, no source: 0xFFFFFFFF marks a data chunk of unknown length"},
		{name: "streamed size, ends mid-frame", dataSize: unboundedData, keep: 11, want: []float64{1, 2, 3, 4}, truncated: true,
			src: "common practice, no source: a partial last frame is a cut"},
		{name: "empty data", dataSize: 0, keep: 0, want: nil, src: "RIFF/WAVE format spec: a zero-size data chunk"},
	}
	for _, tc := range tests {
		t.Run(tc.name, func(t *testing.T) {
			t.Parallel()
			s := wavSpec{format: formatPCM, bits: 16, channels: 2, rate: 50, dataSize: tc.dataSize, dataBytes: data[:tc.keep]}
			file := append(buildWAV(t, s), tc.trailer...)
			w, err := NewWAV("end.wav", bytes.NewReader(file), 2)
			if err != nil {
				t.Fatal(err)
			}
			got, err := readAll(t, w, 2, 2)
			if !slices.Equal(got, tc.want) {
				t.Errorf("got %v, want %v (%s)", got, tc.want, tc.src)
			}
			switch {
			case tc.truncated && (!errors.Is(err, ErrTruncated) || !strings.HasPrefix(err.Error(), "end.wav: offset ")):
				t.Errorf("err = %v, want ErrTruncated with the offset (%s)", err, tc.src)
			case !tc.truncated && err != io.EOF:
				t.Errorf("err = %v, want io.EOF (%s)", err, tc.src)
			}
		})
	}
}

func TestWAVMisbehavingReaders(t *testing.T) {
	t.Parallel()
	const frames = 40000 // 160 KB: several fills of the 64 KiB buffer
	vals := make([]int64, 2*frames)
	for i := range vals {
		vals[i] = int64(i%65536 - 32768)
	}
	s := wavSpec{format: formatPCM, bits: 16, channels: 2, rate: 10240, dataSize: -1, dataBytes: pcmBytes(vals, 2)}
	file := buildWAV(t, s)
	header := len(file) - len(s.dataBytes)
	failAt := header + 4*1000 + 2 // two bytes into frame 1000
	for name, rd := range misbehaving(file, failAt) {
		t.Run(name, func(t *testing.T) {
			t.Parallel()
			w, err := NewWAV("m.wav", rd.r, 2)
			if err != nil {
				t.Fatal(err)
			}
			got, err := readAll(t, w, 2, 777)
			for i, v := range got {
				if v != float64(vals[i]) {
					t.Fatalf("sample %d = %v, want %d", i, v, vals[i])
				}
			}
			switch {
			case !rd.fails:
				if err != io.EOF || len(got) != 2*frames {
					t.Errorf("%d frames, err %v; want %d, io.EOF", len(got)/2, err, frames)
				}
			case name == "fail mid-block":
				if !errors.Is(err, errBoom) || len(got) != 2*1000 {
					t.Errorf("%d frames, err %v; want 1000 frames, then the reader's error", len(got)/2, err)
				}
			default:
				if !errors.Is(err, iotest.ErrTimeout) || len(got) == 0 || len(got) >= 2*frames {
					t.Errorf("%d frames, err %v; want the frames of the first read, then iotest.ErrTimeout", len(got)/2, err)
				}
			}
			if n, again := w.ReadFrames(make([]float64, 4)); n != 0 || again != err {
				t.Errorf("after the end: %d, %v; want 0 and the same error (sticky)", n, again)
			}
		})
	}
}

func TestWAVShortBuffer(t *testing.T) {
	t.Parallel()
	s := wavSpec{format: formatFloat, bits: 32, channels: 3, rate: 50, dataSize: -1, dataBytes: floatBytes([]float32{1, 2, 3})}
	w, err := NewWAV("s.wav", bytes.NewReader(buildWAV(t, s)), 3)
	if err != nil {
		t.Fatal(err)
	}
	if n, err := w.ReadFrames(nil); n != 0 || err != nil {
		t.Errorf("ReadFrames(nil) = %d, %v; want 0, nil", n, err)
	}
	if n, err := w.ReadFrames(make([]float64, 2)); n != 0 || err != io.ErrShortBuffer {
		t.Errorf("ReadFrames(2 values) = %d, %v; want 0, io.ErrShortBuffer", n, err)
	}
}

// BenchmarkWAVReadFrames decodes an endless data chunk (a streamed size,
// repeating 1024 frames), so that NewWAV runs once, outside the loop.
func BenchmarkWAVReadFrames(b *testing.B) {
	for _, bits := range []int{16, 24, 32} {
		b.Run(fmt.Sprintf("bits=%d", bits), func(b *testing.B) {
			const nch, frames, block = 6, 1024, 256
			vals := make([]int64, nch*frames)
			for i := range vals {
				vals[i] = int64(1000 * math.Sin(float64(i)))
			}
			data := pcmBytes(vals, bits/8)
			head := buildWAV(b, wavSpec{format: formatPCM, bits: bits, channels: nch, rate: 10240, dataSize: unboundedData})
			w, err := NewWAV("bench.wav", &cycleReader{head: head, body: data}, nch)
			if err != nil {
				b.Fatal(err)
			}
			dst := make([]float64, block*nch)
			b.SetBytes(int64(block * nch * bits / 8))
			b.ReportAllocs()
			total := 0
			for b.Loop() {
				n, err := w.ReadFrames(dst)
				if err != nil {
					b.Fatal(err)
				}
				total += n
			}
			if first := (total - block) % frames * nch; total == 0 || dst[0] != float64(vals[first]) {
				b.Fatalf("%d frames, first sample of the last block %v", total, dst[0])
			}
		})
	}
}
