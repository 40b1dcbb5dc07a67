package comtrade

import (
	"bufio"
	"bytes"
	"encoding/binary"
	"fmt"
	"io"
	"math"
	"strconv"

	"github.com/gridloupe/gridloupe/stream/input"
)

// Missing-value markers (IEEE C37.111-1999 §7/-2013 §8: a sample not
// recorded): 0x8000 in BINARY, 0x80000000 in BINARY32, a blank field in
// ASCII. They are delivered as NaN, so their windows are flagged
// bad_sample.
const (
	missing16 = -0x8000
	missing32 = -0x80000000
)

// Reader delivers the mapped analog channels of a .dat file as frames of
// primary values. Memory is constant: one bufio buffer and one reused
// record. A Reader is not safe for concurrent use.
type Reader struct {
	cfg    *Config
	path   string
	br     *bufio.Reader
	cols   []int     // per output channel: analog index
	gain   []float64 // per analog channel: a·factor
	off    []float64 // per analog channel: b·factor
	rec    []byte    // one binary record
	vals   []float64 // one record's analog values
	width  int       // bytes per analog sample (binary)
	n      uint64    // samples delivered
	limit  uint64    // samples the .cfg declares
	line   int
	off64  int64
	err    error
	stamps *[]float64 // when set, every time stamp is appended (nrates 0)
}

// NewReader returns a reader of the .dat data in r (named path in
// messages) described by cfg, delivering the analog channels cols
// (0-based, from Config.Map) in that order.
func NewReader(cfg *Config, path string, r io.Reader, cols []int) (*Reader, error) {
	d := &Reader{cfg: cfg, path: path, br: bufio.NewReaderSize(r, 64<<10), cols: cols, limit: cfg.Samples(),
		gain: make([]float64, len(cfg.Analog)), off: make([]float64, len(cfg.Analog)), vals: make([]float64, len(cfg.Analog))}
	for _, c := range cols {
		if c < 0 || c >= len(cfg.Analog) {
			return nil, fmt.Errorf("%s: analog channel %d out of range 1..%d", cfg.Path, c+1, len(cfg.Analog))
		}
	}
	for k := range cfg.Analog {
		f := cfg.Analog[k].Factor()
		d.gain[k], d.off[k] = cfg.Analog[k].A*f, cfg.Analog[k].B*f
	}
	switch cfg.FileType {
	case Binary:
		d.width = 2
	case Binary32, Float32:
		d.width = 4
	}
	if d.width > 0 {
		d.rec = make([]byte, 8+d.width*len(cfg.Analog)+2*((cfg.Digital+15)/16))
	}
	return d, nil
}

// Line returns the last ASCII line read (0 for binary files).
func (d *Reader) Line() int { return d.line }

// Offset returns the bytes of binary records read.
func (d *Reader) Offset() int64 { return d.off64 }

// ReadFrames fills dst with up to len(dst)/len(cols) frames, following
// io.Reader's rules. It stops at the sample count the .cfg declares; data
// that ends before it returns an error wrapping ErrTruncated.
func (d *Reader) ReadFrames(dst []float64) (int, error) {
	nch := len(d.cols)
	room := len(dst) / nch
	if room == 0 {
		if len(dst) == 0 {
			return 0, nil
		}
		return 0, io.ErrShortBuffer
	}
	n := 0
	for n < room && d.err == nil {
		if d.n >= d.limit {
			d.err = io.EOF
			break
		}
		var ts float64
		var err error
		if d.width == 0 {
			ts, err = d.asciiRecord()
		} else {
			ts, err = d.binaryRecord()
		}
		if err != nil {
			d.err = err
			break
		}
		if d.stamps != nil {
			*d.stamps = append(*d.stamps, ts)
		}
		row := dst[n*nch : (n+1)*nch]
		for i, c := range d.cols {
			row[i] = d.vals[c]
		}
		n++
		d.n++
	}
	if n > 0 {
		return n, nil
	}
	return 0, d.err
}

// binaryRecord reads one binary record into d.vals.
func (d *Reader) binaryRecord() (float64, error) {
	k, err := io.ReadFull(d.br, d.rec)
	at := d.off64
	d.off64 += int64(k)
	switch {
	case err == io.EOF:
		return 0, d.short()
	case err == io.ErrUnexpectedEOF:
		return 0, &Error{File: d.path, Offset: at, Msg: fmt.Sprintf("the file ends %d bytes into a %d-byte record", k, len(d.rec)), err: input.ErrTruncated}
	case err != nil:
		return 0, fmt.Errorf("%s: offset %d: read: %w", d.path, at, err)
	}
	le := binary.LittleEndian
	ts := float64(le.Uint32(d.rec[4:]))
	b := d.rec[8:]
	for c := range d.vals {
		var x float64
		switch d.cfg.FileType {
		case Binary:
			v := int16(le.Uint16(b[2*c:]))
			x = float64(v)
			if v == missing16 {
				x = math.NaN()
			}
		case Binary32:
			v := int32(le.Uint32(b[4*c:]))
			x = float64(v)
			if v == missing32 {
				x = math.NaN()
			}
		default:
			x = float64(math.Float32frombits(le.Uint32(b[4*c:])))
		}
		d.vals[c] = x*d.gain[c] + d.off[c]
	}
	return ts, nil
}

// asciiRecord reads one ASCII line into d.vals.
func (d *Reader) asciiRecord() (float64, error) {
	for {
		line, err := d.br.ReadSlice('\n')
		if err == bufio.ErrBufferFull {
			return 0, &Error{File: d.path, Line: d.line + 1, Msg: "line longer than 64 KiB", err: ErrData}
		}
		if len(line) == 0 && err == io.EOF {
			return 0, d.short()
		}
		if err != nil && err != io.EOF {
			return 0, fmt.Errorf("%s:%d: read: %w", d.path, d.line+1, err)
		}
		d.line++
		line = bytes.TrimRight(line, "\r\n")
		if len(bytes.TrimSpace(line)) == 0 || line[0] == 0x1A { // blank line or the DOS end-of-file mark
			if err == io.EOF {
				return 0, d.short()
			}
			continue
		}
		return d.parseASCII(line)
	}
}

// parseASCII parses n,timestamp,A1..An,D1..Dm.
func (d *Reader) parseASCII(line []byte) (float64, error) {
	field := 0
	var ts float64
	na := len(d.vals)
	for len(line) > 0 || field <= 1+na {
		var f []byte
		if i := bytes.IndexByte(line, ','); i >= 0 {
			f, line = line[:i], line[i+1:]
		} else {
			f, line = line, nil
		}
		f = bytes.TrimSpace(f)
		switch {
		case field == 0:
		case field == 1:
			if len(f) > 0 {
				v, err := strconv.ParseFloat(string(f), 64)
				if err != nil {
					return 0, &Error{File: d.path, Line: d.line, Field: 2, Msg: fmt.Sprintf("time stamp %q is not a number", f), err: ErrData}
				}
				ts = v
			}
		case field-2 < na:
			c := field - 2
			if len(f) == 0 || string(f) == "99999" {
				d.vals[c] = math.NaN() // not recorded
				break
			}
			v, err := strconv.ParseFloat(string(f), 64)
			if err != nil || math.IsInf(v, 0) || math.IsNaN(v) {
				return 0, &Error{File: d.path, Line: d.line, Field: field + 1, Msg: fmt.Sprintf("analog value %q (channel %q) is not a number", f, d.cfg.Analog[c].ID), err: ErrData}
			}
			d.vals[c] = v*d.gain[c] + d.off[c]
		}
		field++
		if line == nil {
			break
		}
	}
	if field < 2+na {
		return 0, &Error{File: d.path, Line: d.line, Msg: fmt.Sprintf("%d fields, want %d (n, time stamp, %d analog, %d digital)", field, 2+na+d.cfg.Digital, na, d.cfg.Digital), err: ErrData}
	}
	return ts, nil
}

// short reports data that ended before the declared sample count.
func (d *Reader) short() error {
	if d.n == 0 {
		return &Error{File: d.path, Line: d.line, Offset: d.off64, Msg: "no samples", err: ErrData}
	}
	return &Error{File: d.path, Line: d.line, Offset: d.off64,
		Msg: fmt.Sprintf("the file ends after %d of the %d samples the .cfg declares", d.n, d.limit), err: input.ErrTruncated}
}
