package input

import (
	"bufio"
	"bytes"
	"encoding/binary"
	"errors"
	"fmt"
	"io"
	"math"
)

const (
	// wavBufSize is the bufio buffer of a WAV reader.
	wavBufSize = 64 << 10
	// wavBlock is the size of the reused byte block samples are decoded from.
	wavBlock = 32 << 10
	// maxChunks bounds the chunks skipped before the data chunk.
	maxChunks = 1024
	// unboundedData is the data-chunk size a streaming writer leaves when it
	// does not know the length: read until EOF.
	unboundedData = 0xFFFFFFFF
)

// WAVE format codes (RIFF/WAVE format specification; the extensible form's
// sub-format GUID carries the same code in its first four bytes).
const (
	formatPCM        = 0x0001
	formatFloat      = 0x0003
	formatExtensible = 0xFFFE
)

// guidTail is bytes 4..15 of the KSDATAFORMAT_SUBTYPE_* GUIDs
// (xxxxxxxx-0000-0010-8000-00AA00389B71) as stored little-endian in a
// WAVE_FORMAT_EXTENSIBLE fmt chunk.
var guidTail = []byte{0x00, 0x00, 0x10, 0x00, 0x80, 0x00, 0x00, 0xAA, 0x00, 0x38, 0x9B, 0x71}

// supported is the advice every rejected sample format ends with.
const supported = "use 16, 24 or 32-bit integer or 32-bit float"

// sampleKind is how one sample is stored.
type sampleKind uint8

const (
	kindInt16 sampleKind = iota + 1
	kindInt24
	kindInt32
	kindFloat32
)

// WAV reads a RIFF/WAVE recording: PCM integer samples in 16, 24 or 32-bit
// containers, 32-bit IEEE float, or WAVE_FORMAT_EXTENSIBLE with either, with
// fewer valid bits than the container. Integer samples are delivered as the
// signed count: the container's value shifted right by (container bits −
// valid bits). Float samples are delivered as stored. Chunks other than fmt
// and data are skipped.
//
// Memory is constant: one bufio buffer and one reused byte block. A WAV is not
// safe for concurrent use.
type WAV struct {
	path      string
	br        *bufio.Reader
	nch       int
	fs        float64
	kind      sampleKind
	shift     uint  // right shift of the left-aligned 32-bit value: 32 − valid bits
	align     int   // bytes per frame
	remaining int64 // data bytes left; −1 when unbounded
	off       int64 // bytes consumed
	buf       []byte
	err       error // sticky
}

// NewWAV reads the header of a WAV recording from r up to the start of its
// samples. path is used only in messages. The file's channel count must equal
// channels. Header faults return a *HeaderError with the byte offset: not
// RIFF/WAVE, a truncated header, an unsupported format (8-bit and 64-bit are
// rejected by name), a wrong channel count.
func NewWAV(path string, r io.Reader, channels int) (*WAV, error) {
	if r == nil {
		return nil, fmt.Errorf("%s: input: nil reader", path)
	}
	w := &WAV{path: path, br: bufio.NewReaderSize(r, wavBufSize), nch: channels}
	if err := w.readHeader(); err != nil {
		return nil, err
	}
	block := max(wavBlock/w.align, 1) * w.align
	w.buf = make([]byte, block)
	return w, nil
}

// maxWAVRate is the highest sample rate accepted from a WAV header, as for
// the config's sample_rate_hz: no input this targets samples faster
// (common practice, no source).
const maxWAVRate = 1_000_000

// SampleRate returns the file's sample rate in hertz.
func (w *WAV) SampleRate() float64 { return w.fs }

// Channels returns the number of channels in a frame.
func (w *WAV) Channels() int { return w.nch }

// Rails returns the most negative and the most positive raw value an
// integer sample can hold (−2^(b−1) and 2^(b−1) − 1 for b valid bits), so a
// pipeline can flag samples that reached them as clipped. ok is false for
// float samples, which have no rail.
func (w *WAV) Rails() (lo, hi float64, ok bool) {
	if w.kind == kindFloat32 {
		return 0, 0, false
	}
	b := 32 - w.shift
	return -math.Ldexp(1, int(b)-1), math.Ldexp(1, int(b)-1) - 1, true
}

// Offset returns the bytes consumed from the start of the file.
func (w *WAV) Offset() int64 { return w.off }

// Remaining returns the data bytes not yet read, or −1 when the data chunk
// declares no length (a streaming writer's 0xFFFFFFFF).
func (w *WAV) Remaining() int64 { return w.remaining }

// ReadFrames fills dst with up to len(dst)/Channels() frames. As with
// io.Reader, frames > 0 may come with an error; io.EOF means no more data.
// Data that ends before the data chunk's declared size, or inside a frame,
// returns an error wrapping ErrTruncated after the whole frames before it.
// Errors are sticky. A dst shorter than one frame returns io.ErrShortBuffer.
func (w *WAV) ReadFrames(dst []float64) (int, error) {
	if len(dst) == 0 {
		return 0, nil
	}
	room := len(dst) / w.nch
	if room == 0 {
		return 0, io.ErrShortBuffer
	}
	n := 0
	for n < room && w.err == nil {
		want := min(room-n, len(w.buf)/w.align)
		if w.remaining >= 0 {
			if left := w.remaining / int64(w.align); int64(want) > left {
				want = int(left)
			}
			if want == 0 {
				w.err = w.endOfData()
				break
			}
		}
		b := w.buf[:want*w.align]
		got, err := io.ReadFull(w.br, b)
		whole := got / w.align
		w.decode(dst[n*w.nch:], b[:whole*w.align])
		n += whole
		w.off += int64(got)
		if w.remaining >= 0 {
			w.remaining -= int64(got)
		}
		switch {
		case err == nil:
		case (err == io.EOF || err == io.ErrUnexpectedEOF) && w.remaining < 0 && got%w.align == 0:
			w.err = io.EOF // a streamed data chunk ends with the file
		case err == io.EOF || err == io.ErrUnexpectedEOF:
			w.err = w.cut()
		default:
			w.err = fmt.Errorf("%s: offset %d: read: %w", w.path, w.off, err)
		}
	}
	return n, w.err
}

// endOfData is the end of a sized data chunk: io.EOF, or ErrTruncated when
// its size is not a whole number of frames.
func (w *WAV) endOfData() error {
	if w.remaining == 0 {
		return io.EOF
	}
	return fmt.Errorf("%s: offset %d: data chunk ends %d bytes into a %d-byte frame: %w",
		w.path, w.off, w.remaining, w.align, ErrTruncated)
}

// cut reports data that ended early.
func (w *WAV) cut() error {
	if w.remaining > 0 {
		return fmt.Errorf("%s: offset %d: recording ends %d bytes before the end of its data chunk: %w",
			w.path, w.off, w.remaining, ErrTruncated)
	}
	return fmt.Errorf("%s: offset %d: recording ends inside a frame: %w", w.path, w.off, ErrTruncated)
}

// decode converts whole frames in b to raw values in dst.
func (w *WAV) decode(dst []float64, b []byte) {
	le := binary.LittleEndian
	switch w.kind {
	case kindInt16:
		// the shift hoisted (and masked: it is 16 to 31 here, and a Go
		// shift of 32 or more would need a guard) and the indices advanced
		// together, so the loop drops most bounds checks and the reload of w
		sh := w.shift & 31
		for i, j := 0, 0; i < len(dst) && j+1 < len(b); i, j = i+1, j+2 {
			dst[i] = float64(int32((uint32(b[j])|uint32(b[j+1])<<8)<<16) >> sh)
		}
	case kindInt24:
		for i := range len(b) / 3 {
			p := b[3*i : 3*i+3]
			u := uint32(p[0])<<8 | uint32(p[1])<<16 | uint32(p[2])<<24
			dst[i] = float64(int32(u) >> w.shift)
		}
	case kindInt32:
		for i := range len(b) / 4 {
			dst[i] = float64(int32(le.Uint32(b[4*i:])) >> w.shift)
		}
	case kindFloat32:
		for i := range len(b) / 4 {
			dst[i] = float64(math.Float32frombits(le.Uint32(b[4*i:])))
		}
	}
}

// readHeader reads the RIFF header and chunks up to the data chunk.
func (w *WAV) readHeader() error {
	var h [12]byte
	if err := w.read(h[:], "RIFF header"); err != nil {
		return err
	}
	switch string(h[0:4]) {
	case "RIFF":
	case "RIFX":
		return w.herr(0, "big-endian RIFX files are not supported: use little-endian RIFF/WAVE")
	case "RF64":
		return w.herr(0, "RF64 files are not supported: use RIFF/WAVE (up to 4 GiB)")
	default:
		return w.herr(0, "not a RIFF/WAVE file (starts with %q)", h[0:4])
	}
	if string(h[8:12]) != "WAVE" {
		return w.herr(8, "RIFF form type is %q, not \"WAVE\"", h[8:12])
	}
	haveFmt := false
	for range maxChunks {
		var ch [8]byte
		at := w.off
		if err := w.read(ch[:], "chunk header"); err != nil {
			var he *HeaderError
			if errors.As(err, &he) && !haveFmt {
				he.Msg = "truncated header: the file ends before a fmt chunk"
			} else if errors.As(err, &he) {
				he.Msg = "truncated header: the file ends before the data chunk"
			}
			return err
		}
		id, size := string(ch[0:4]), binary.LittleEndian.Uint32(ch[4:8])
		switch id {
		case "fmt ":
			if haveFmt {
				return w.herr(at, "second fmt chunk")
			}
			if err := w.readFmt(at, size); err != nil {
				return err
			}
			haveFmt = true
		case "data":
			if !haveFmt {
				return w.herr(at, "data chunk before the fmt chunk")
			}
			w.remaining = int64(size)
			if size == unboundedData {
				w.remaining = -1
			}
			return nil
		default:
			if err := w.skip(at, int64(size)+int64(size&1)); err != nil { // RIFF pads odd chunks to even length
				return err
			}
		}
	}
	return w.herr(w.off, "no data chunk within the first %d chunks", maxChunks)
}

// readFmt parses a fmt chunk of the given size whose header starts at at.
func (w *WAV) readFmt(at int64, size uint32) error {
	if size < 16 {
		return w.herr(at, "fmt chunk is %d bytes, want at least 16", size)
	}
	var f [40]byte
	n := min(int(size), len(f))
	if err := w.read(f[:n], "fmt chunk"); err != nil {
		return err
	}
	if err := w.skip(at, int64(size)-int64(n)+int64(size&1)); err != nil {
		return err
	}
	le := binary.LittleEndian
	format := uint32(le.Uint16(f[0:]))
	channels := int(le.Uint16(f[2:]))
	rate := le.Uint32(f[4:])
	align := int(le.Uint16(f[12:]))
	bits := int(le.Uint16(f[14:]))
	container, valid := (bits+7)/8*8, bits
	sub := format
	if format == formatExtensible {
		if n < 40 {
			return w.herr(at, "WAVE_FORMAT_EXTENSIBLE fmt chunk is %d bytes, want 40", size)
		}
		container, valid = bits, int(le.Uint16(f[18:]))
		if valid == 0 {
			valid = container
		}
		if !bytes.Equal(f[28:40], guidTail) {
			return w.herr(at, "WAVE_FORMAT_EXTENSIBLE sub-format GUID % X is not PCM or IEEE float: %s", f[24:40], supported)
		}
		sub = le.Uint32(f[24:])
	}
	switch {
	case sub != formatPCM && sub != formatFloat:
		return w.herr(at, "format code 0x%04X (%s) is not supported: %s", sub, formatName(sub), supported)
	case container == 8:
		return w.herr(at, "8-bit PCM is not supported; %s", supported)
	case container == 64 && sub == formatFloat:
		return w.herr(at, "64-bit float is not supported; %s", supported)
	case container == 64:
		return w.herr(at, "64-bit integer PCM is not supported; %s", supported)
	case sub == formatFloat && (container != 32 || valid != 32):
		return w.herr(at, "%d-bit float (%d valid bits) is not supported; %s", container, valid, supported)
	case container != 16 && container != 24 && container != 32:
		return w.herr(at, "%d-bit samples are not supported; %s", container, supported)
	case valid < 2 || valid > container:
		return w.herr(at, "%d valid bits in a %d-bit container", valid, container)
	case channels == 0:
		return w.herr(at, "the file declares 0 channels")
	case channels != w.nch:
		return w.herr(at, "the file has %d channels, the configuration %d", channels, w.nch)
	case rate == 0:
		return w.herr(at, "the file declares a sample rate of 0 Hz")
	case rate > maxWAVRate:
		return w.herr(at, "the file declares a sample rate of %d Hz; allowed: at most %d Hz", rate, maxWAVRate)
	case align != channels*container/8:
		return w.herr(at, "block align %d does not match %d channels of %d bytes", align, channels, container/8)
	}
	w.fs, w.align, w.shift = float64(rate), align, uint(32-valid)
	switch {
	case sub == formatFloat:
		w.kind = kindFloat32
	case container == 16:
		w.kind = kindInt16
	case container == 24:
		w.kind = kindInt24
	default:
		w.kind = kindInt32
	}
	return nil
}

// formatName names the common WAVE format codes for messages.
func formatName(code uint32) string {
	switch code {
	case 0x0002:
		return "Microsoft ADPCM"
	case 0x0006:
		return "A-law"
	case 0x0007:
		return "µ-law"
	case 0x0011:
		return "IMA ADPCM"
	case 0x0055:
		return "MPEG layer 3"
	}
	return "compressed or unknown"
}

// read fills b from the header, counting the offset; a short read is a
// truncated header, any other failure a read error.
func (w *WAV) read(b []byte, what string) error {
	at := w.off
	n, err := io.ReadFull(w.br, b)
	w.off += int64(n)
	switch {
	case err == nil:
		return nil
	case err == io.EOF || err == io.ErrUnexpectedEOF:
		return w.herr(at, "truncated header: the file ends inside the %s", what)
	}
	return fmt.Errorf("%s: offset %d: read: %w", w.path, w.off, err)
}

// skip discards n header bytes of the chunk whose header starts at at.
func (w *WAV) skip(at, n int64) error {
	for n > 0 {
		step := int(min(n, 1<<30))
		d, err := w.br.Discard(step)
		w.off += int64(d)
		n -= int64(d)
		if err == io.EOF {
			return w.herr(at, "truncated header: the file ends inside a chunk")
		}
		if err != nil {
			return fmt.Errorf("%s: offset %d: read: %w", w.path, w.off, err)
		}
	}
	return nil
}

// herr returns a *HeaderError at byte offset at.
func (w *WAV) herr(at int64, format string, a ...any) error {
	return &HeaderError{File: w.path, Offset: at, Msg: fmt.Sprintf(format, a...)}
}
