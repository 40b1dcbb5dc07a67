package pcm

import (
	"fmt"
	"io"

	"github.com/gridloupe/gridloupe/stream/input"
)

const (
	// rawBuf is the byte buffer of a raw reader (about 16 KiB, a whole
	// number of frames): a few hundred frames per read at 10 kHz.
	rawBuf = 16 << 10
	// maxEmptyReads bounds reads that return neither data nor an error
	// before io.ErrNoProgress, as bufio does.
	maxEmptyReads = 100
)

// Raw reads bare interleaved PCM: frames of Channels samples in Format,
// nothing else. It delivers whatever whole frames a read brings (a pipe or
// socket is not made to wait for a full buffer), keeps a partial frame for
// the next read, and reports a stream that ends inside a frame with an
// error wrapping input.ErrTruncated. Memory is one reused byte buffer. A Raw
// is not safe for concurrent use.
type Raw struct {
	name  string
	rd    io.Reader
	f     Format
	nch   int
	align int
	buf   []byte
	have  int   // bytes in buf
	off   int64 // bytes of whole frames delivered
	err   error // sticky read error
}

// NewRaw returns a reader of channels-channel frames in format f from r.
// name is used in messages (a path, "-" for standard input, host:port).
func NewRaw(name string, r io.Reader, channels int, f Format) (*Raw, error) {
	if !f.Valid() {
		return nil, fmt.Errorf("%s: %w: format %d", name, ErrFormat, f)
	}
	if channels < 1 {
		return nil, fmt.Errorf("%s: %w: %d channels", name, ErrFormat, channels)
	}
	align := channels * f.Bytes()
	return &Raw{name: name, rd: r, f: f, nch: channels, align: align, buf: make([]byte, max(1, rawBuf/align)*align)}, nil
}

// Reset continues reading from r (a new connection): a partial frame and
// a sticky error are dropped; the offset keeps counting.
func (r *Raw) Reset(rd io.Reader) { r.rd, r.have, r.err = rd, 0, nil }

// Offset returns the bytes of whole frames delivered so far.
func (r *Raw) Offset() int64 { return r.off }

// ReadFrames fills dst with up to len(dst)/channels frames, following
// io.Reader's rules. A dst shorter than one frame returns io.ErrShortBuffer.
func (r *Raw) ReadFrames(dst []float64) (int, error) {
	room := len(dst) / r.nch
	if room == 0 {
		if len(dst) == 0 {
			return 0, nil
		}
		return 0, io.ErrShortBuffer
	}
	for empty := 0; ; {
		if whole := r.have / r.align; whole > 0 {
			k := min(whole, room)
			nb := k * r.align
			r.f.Decode(dst[:k*r.nch], r.buf[:nb])
			r.have = copy(r.buf, r.buf[nb:r.have])
			r.off += int64(nb)
			return k, nil
		}
		if r.err != nil {
			return 0, r.end()
		}
		n, err := r.rd.Read(r.buf[r.have:])
		r.have += n
		if err != nil {
			r.err = err
		} else if n == 0 {
			if empty++; empty >= maxEmptyReads {
				r.err = io.ErrNoProgress
			}
		}
	}
}

// end turns the sticky read error into what ReadFrames returns once no
// whole frame is left.
func (r *Raw) end() error {
	switch {
	case r.err == io.EOF && r.have > 0:
		return fmt.Errorf("%s: offset %d: stream ends %d bytes into a %d-byte frame: %w",
			r.name, r.off, r.have, r.align, input.ErrTruncated)
	case r.err == io.EOF:
		return io.EOF
	}
	return fmt.Errorf("%s: offset %d: read: %w", r.name, r.off, r.err)
}
