package pcm

import (
	"bufio"
	"bytes"
	"encoding/binary"
	"errors"
	"fmt"
	"hash/crc32"
	"io"

	"github.com/gridloupe/gridloupe/stream"
	"github.com/gridloupe/gridloupe/stream/input"
)

// GLF1 frame layout (DESIGN "Sources"), all fields little-endian.
const (
	glf1Header = 20   // magic, format, channels, count, sequence, first index
	glf1CRC    = 4    // CRC-32 (IEEE) of every byte before it
	MaxGLF1Ch  = 16   // channel count 1..16
	MaxGLF1N   = 4096 // samples per channel in a frame, 1..4096
	// defaultMaxJump is the largest forward jump of the sample index taken
	// as lost samples (2^26 ≈ 109 minutes at 10.24 kHz); a larger jump, or
	// one backwards, is a sender that restarted its count.
	defaultMaxJump = 1 << 26
	// resendWindow is how many frames back a resent frame's sequence
	// number may lie (common practice, no source: a sender's retry queue).
	resendWindow = 64
)

// glf1Magic starts every frame.
var glf1Magic = [4]byte{'G', 'L', 'F', '1'}

// GLF1Stats counts what a GLF1 reader met.
type GLF1Stats struct {
	Frames   uint64 // good frames
	Bad      uint64 // frames dropped for a bad CRC or an impossible header
	Skipped  uint64 // bytes skipped while resynchronising on the next magic
	Missing  uint64 // samples per channel reported as gaps
	Restarts uint64 // index jumps taken as a sender restart
	Dups     uint64 // frames whose samples had all been delivered already
}

// GLF1 reads framed PCM. A frame with a bad CRC or an impossible header is
// dropped and counted, and reading resynchronises on the next magic; a jump
// of the first-sample index is reported as a *stream.Gap of exactly the
// missing samples (so a lost or corrupted frame is a gap of its samples);
// a frame that repeats delivered samples is trimmed or dropped. A good frame
// whose format or channel count differs from the configuration is an error
// (ErrFormat): the sender is set up differently. Memory is constant: one
// bufio buffer of two maximal frames. A GLF1 is not safe for concurrent use.
type GLF1 struct {
	name    string
	br      *bufio.Reader
	f       Format
	nch     int
	maxJump uint64

	cur     []byte // sample bytes of the current frame
	curOff  int    // next byte to deliver
	next    uint64 // sender index of the next sample expected
	seq     uint32 // sequence number of the last frame placed
	started bool
	off     int64 // stream bytes consumed
	gap     stream.Gap
	pending uint64 // missing samples to report before cur
	err     error
	stats   GLF1Stats
}

// NewGLF1 returns a reader of GLF1 frames with the given channel count and
// sample format from r. name is used in messages.
func NewGLF1(name string, r io.Reader, channels int, f Format) (*GLF1, error) {
	if !f.Valid() {
		return nil, fmt.Errorf("%s: %w: format %d", name, ErrFormat, f)
	}
	if channels < 1 || channels > MaxGLF1Ch {
		return nil, fmt.Errorf("%s: %w: GLF1 carries 1 to %d channels, the configuration has %d", name, ErrFormat, MaxGLF1Ch, channels)
	}
	maxFrame := glf1Header + MaxGLF1N*channels*f.Bytes() + glf1CRC
	return &GLF1{name: name, br: bufio.NewReaderSize(r, 2*maxFrame), f: f, nch: channels, maxJump: defaultMaxJump,
		cur: make([]byte, 0, MaxGLF1N*channels*f.Bytes())}, nil
}

// Reset continues reading from r (a new connection): buffered bytes, the
// current frame and a sticky error are dropped; the sample index expected
// next is kept, so the next frame's index tells the samples lost between.
func (g *GLF1) Reset(r io.Reader) {
	g.br.Reset(r)
	g.cur, g.curOff, g.err = g.cur[:0], 0, nil
}

// Stats returns the counters.
func (g *GLF1) Stats() GLF1Stats { return g.stats }

// Offset returns the stream bytes consumed so far.
func (g *GLF1) Offset() int64 { return g.off }

// ReadFrames fills dst with up to len(dst)/channels frames from at most one
// GLF1 frame, following io.Reader's rules; a hole in the sample index is
// returned as a *stream.Gap (reused: read Missing before the next call).
// A stream that ends inside a frame returns an error wrapping
// input.ErrTruncated.
func (g *GLF1) ReadFrames(dst []float64) (int, error) {
	room := len(dst) / g.nch
	if room == 0 {
		if len(dst) == 0 {
			return 0, nil
		}
		return 0, io.ErrShortBuffer
	}
	for {
		if g.pending > 0 {
			g.gap.Missing, g.pending = g.pending, 0
			return 0, &g.gap
		}
		if left := len(g.cur) - g.curOff; left > 0 {
			align := g.nch * g.f.Bytes()
			k := min(room, left/align)
			g.f.Decode(dst[:k*g.nch], g.cur[g.curOff:g.curOff+k*align])
			g.curOff += k * align
			return k, nil
		}
		if g.err != nil {
			return 0, g.err
		}
		g.err = g.frame()
	}
}

// frame reads up to the next good frame and sets cur and pending.
func (g *GLF1) frame() error {
	for {
		h, err := g.br.Peek(glf1Header)
		if err != nil {
			return g.eof(len(h), err)
		}
		if !bytes.Equal(h[:4], glf1Magic[:]) {
			if err := g.resync(); err != nil {
				return err
			}
			continue
		}
		le := binary.LittleEndian
		f, nch, n := Format(h[4]), int(h[5]), int(le.Uint16(h[6:]))
		idx := le.Uint64(h[12:])
		if !f.Valid() || nch < 1 || nch > MaxGLF1Ch || n < 1 || n > MaxGLF1N {
			g.bad()
			continue
		}
		size := glf1Header + n*nch*f.Bytes() + glf1CRC
		b, err := g.br.Peek(size)
		if err != nil {
			return g.eof(len(b), err)
		}
		body := size - glf1CRC
		if crc32.ChecksumIEEE(b[:body]) != le.Uint32(b[body:]) {
			g.bad()
			continue
		}
		at := g.off
		if f != g.f || nch != g.nch {
			return fmt.Errorf("%s: offset %d: %w: GLF1 frame of %d channels in %s, the configuration has %d channels in %s",
				g.name, at, ErrFormat, nch, f, g.nch, g.f)
		}
		g.cur = append(g.cur[:0], b[glf1Header:body]...)
		g.curOff = 0
		g.discard(size)
		g.stats.Frames++
		g.place(idx, uint64(n), le.Uint32(h[8:]))
		if len(g.cur) > 0 {
			return nil
		}
	}
}

// place lines the frame of n samples starting at sender index idx, with
// sequence number seq, up with the samples delivered so far:
//   - the expected index: contiguous;
//   - ahead (by at most maxJump): the samples between are missing (a gap);
//   - behind, with a sequence number not ahead of the last one and at most
//     resendWindow behind it: a resent frame; only its samples past those
//     delivered are kept;
//   - back at index 0 with sequence number 0 (a sender starts so), behind
//     with an advancing or distant sequence number, or absurdly far ahead:
//     the sender restarted its count. The time lost is unknown: the hole is
//     marked with one missing sample so its window is flagged gap, and the
//     new count is followed.
func (g *GLF1) place(idx, n uint64, seq uint32) {
	prevSeq := g.seq
	g.seq = seq
	switch {
	case !g.started:
		g.started = true
	case idx == g.next:
	case idx > g.next && idx-g.next <= g.maxJump:
		g.pending = idx - g.next
		g.stats.Missing += g.pending
	case idx < g.next && !(idx == 0 && seq == 0) && int32(seq-prevSeq) <= 0 && int32(seq-prevSeq) > -resendWindow:
		g.seq = prevSeq
		if idx+n <= g.next {
			g.stats.Dups++ // everything in it was delivered
			g.cur = g.cur[:0]
			return
		}
		g.curOff = int(g.next-idx) * g.nch * g.f.Bytes() // deliver only the new part
		n = idx + n - g.next
		idx = g.next
	default:
		g.stats.Restarts++
		g.pending = 1
		g.stats.Missing++
	}
	g.next = idx + n
}

// bad drops the frame at the current position: one byte is skipped so the
// next resync finds the following magic.
func (g *GLF1) bad() {
	g.stats.Bad++
	g.discard(1)
	g.stats.Skipped++
}

// resync skips bytes up to the next magic (or keeps the last three bytes,
// which may begin one).
func (g *GLF1) resync() error {
	b, _ := g.br.Peek(g.br.Buffered()) // bytes already buffered: cannot fail
	if len(b) < len(glf1Magic) {
		var err error
		b, err = g.br.Peek(len(glf1Magic))
		if err != nil {
			return g.eof(len(b), err)
		}
	}
	i := bytes.Index(b[1:], glf1Magic[:])
	skip := len(b) - (len(glf1Magic) - 1)
	if i >= 0 {
		skip = i + 1
	}
	g.discard(skip)
	g.stats.Skipped += uint64(skip)
	return nil
}

func (g *GLF1) discard(n int) {
	d, _ := g.br.Discard(n) // the bytes were peeked: cannot fail
	g.off += int64(d)
}

// eof turns a failed peek of a frame into the reader's end: io.EOF at a
// frame boundary, ErrTruncated inside one, the read error otherwise.
func (g *GLF1) eof(have int, err error) error {
	switch {
	case errors.Is(err, io.EOF) && have == 0:
		return io.EOF
	case errors.Is(err, io.EOF):
		return fmt.Errorf("%s: offset %d: stream ends %d bytes into a GLF1 frame: %w", g.name, g.off, have, input.ErrTruncated)
	}
	return fmt.Errorf("%s: offset %d: read: %w", g.name, g.off, err)
}

// GLF1Writer writes GLF1 frames: the sender side, for tests, the example
// sender and firmware engineers who want a reference. Not safe for
// concurrent use.
type GLF1Writer struct {
	w   io.Writer
	f   Format
	nch int
	seq uint32
	idx uint64
	buf []byte
}

// NewGLF1Writer returns a writer of channels-channel frames in format f.
func NewGLF1Writer(w io.Writer, channels int, f Format) (*GLF1Writer, error) {
	if !f.Valid() || channels < 1 || channels > MaxGLF1Ch {
		return nil, fmt.Errorf("%w: %d channels in %s", ErrFormat, channels, f)
	}
	return &GLF1Writer{w: w, f: f, nch: channels, buf: make([]byte, glf1Header+MaxGLF1N*channels*f.Bytes()+glf1CRC)}, nil
}

// Frame encodes interleaved samples (a whole number of frames, 1 to 4096 of
// them) as one GLF1 frame and returns its bytes, valid until the next call;
// it advances the sequence number and the sample index.
func (w *GLF1Writer) Frame(samples []float64) ([]byte, error) {
	n := len(samples) / w.nch
	if n < 1 || n > MaxGLF1N || n*w.nch != len(samples) {
		return nil, fmt.Errorf("%w: %d values are not 1 to %d frames of %d channels", ErrFormat, len(samples), MaxGLF1N, w.nch)
	}
	le := binary.LittleEndian
	b := w.buf[:glf1Header+len(samples)*w.f.Bytes()+glf1CRC]
	copy(b, glf1Magic[:])
	b[4], b[5] = byte(w.f), byte(w.nch)
	le.PutUint16(b[6:], uint16(n))
	le.PutUint32(b[8:], w.seq)
	le.PutUint64(b[12:], w.idx)
	w.f.Encode(b[glf1Header:], samples)
	body := len(b) - glf1CRC
	le.PutUint32(b[body:], crc32.ChecksumIEEE(b[:body]))
	w.seq++
	w.idx += uint64(n)
	return b, nil
}

// Skip advances the sample index by n without writing (a sender that lost
// samples, or a test that drops a frame).
func (w *GLF1Writer) Skip(n uint64) { w.idx += n; w.seq++ }

// Write writes interleaved samples as frames of at most per samples each.
func (w *GLF1Writer) Write(samples []float64, per int) error {
	per = max(1, min(per, MaxGLF1N))
	for len(samples) > 0 {
		k := min(len(samples)/w.nch, per) * w.nch
		if k == 0 {
			return fmt.Errorf("%w: %d values left, not a whole frame of %d channels", ErrFormat, len(samples), w.nch)
		}
		b, err := w.Frame(samples[:k])
		if err != nil {
			return err
		}
		if _, err := w.w.Write(b); err != nil {
			return err
		}
		samples = samples[k:]
	}
	return nil
}
