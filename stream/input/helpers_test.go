package input

import (
	"encoding/binary"
	"errors"
	"io"
	"math"
	"strconv"
	"testing"
)

// maxReadCalls bounds every read loop in the tests: a reader that returns
// (0, nil) forever fails instead of hanging.
const maxReadCalls = 10_000_000

// frameReader is what the tests need of CSV and WAV.
type frameReader interface {
	ReadFrames(dst []float64) (int, error)
}

// readAll reads r to its first error in blocks of blockFrames frames of nch
// channels and returns the frames and that error (io.EOF at a clean end).
func readAll(tb testing.TB, r frameReader, nch, blockFrames int) ([]float64, error) {
	tb.Helper()
	dst := make([]float64, nch*blockFrames)
	var out []float64
	for range maxReadCalls {
		n, err := r.ReadFrames(dst)
		if n < 0 || n > blockFrames {
			tb.Fatalf("ReadFrames returned %d frames for room of %d", n, blockFrames)
		}
		out = append(out, dst[:n*nch]...)
		if err != nil {
			return out, err
		}
		if n == 0 {
			tb.Fatal("ReadFrames returned 0 frames and no error")
		}
	}
	tb.Fatal("read loop did not end")
	return nil, nil
}

// errBoom is the error the failing readers return.
var errBoom = errors.New("boom")

// failAfter returns data from r until n bytes have been read, then errBoom.
type failAfter struct {
	r io.Reader
	n int
}

func (f *failAfter) Read(p []byte) (int, error) {
	if f.n <= 0 {
		return 0, errBoom
	}
	if len(p) > f.n {
		p = p[:f.n]
	}
	n, err := f.r.Read(p)
	f.n -= n
	return n, err
}

// csvGen is a reader that generates a uniform CSV recording on the fly:
// "t,c0,c1,...", then one row per sample, t printed to tDigits decimals,
// until at least limit bytes have been produced (0 = no limit). Its memory is
// constant.
type csvGen struct {
	fs      float64
	nch     int
	tDigits int
	limit   int64
	row     uint64
	total   int64
	line    []byte
	pending []byte
	header  bool
}

func newCSVGen(fs float64, nch, tDigits int, limit int64) *csvGen {
	return &csvGen{fs: fs, nch: nch, tDigits: tDigits, limit: limit, line: make([]byte, 0, 256)}
}

func (g *csvGen) Read(p []byte) (int, error) {
	n := 0
	for n < len(p) {
		if len(g.pending) == 0 {
			if g.limit > 0 && g.total >= g.limit {
				break
			}
			g.next()
		}
		k := copy(p[n:], g.pending)
		g.pending = g.pending[k:]
		n += k
		g.total += int64(k)
	}
	if n == 0 {
		return 0, io.EOF
	}
	return n, nil
}

// next renders the header or the next row into g.pending.
func (g *csvGen) next() {
	b := g.line[:0]
	if !g.header {
		g.header = true
		b = append(b, "# generated: North Weir pumping station, cabinet DC-2 (invented)\nt"...)
		for k := range g.nch {
			b = append(b, ",c"...)
			b = strconv.AppendInt(b, int64(k), 10)
		}
		g.line, g.pending = b, append(b, '\n')
		return
	}
	t := float64(g.row) / g.fs
	b = strconv.AppendFloat(b, t, 'f', g.tDigits, 64)
	for k := range g.nch {
		b = append(b, ',')
		v := 325 * math.Sin(2*math.Pi*50*t-float64(k)*2*math.Pi/3)
		b = strconv.AppendFloat(b, v, 'f', 3, 64)
	}
	b = append(b, '\n')
	g.row++
	g.line, g.pending = b, b
}

// genValue is the value csvGen writes for channel k of row i, rounded as
// printed.
func genValue(fs float64, i uint64, k int) float64 {
	t := float64(i) / fs
	v := 325 * math.Sin(2*math.Pi*50*t-float64(k)*2*math.Pi/3)
	f, _ := strconv.ParseFloat(strconv.FormatFloat(v, 'f', 3, 64), 64)
	return f
}

// wavSpec describes a WAV file for buildWAV.
type wavSpec struct {
	format    uint16 // fmt format code; formatExtensible for the extensible form
	sub       uint16 // sub-format code in the GUID (extensible only)
	channels  int
	rate      uint32
	bits      int      // bits per sample: the container size
	valid     int      // valid bits (extensible only)
	align     int      // block align; 0 = channels·ceil(bits/8)
	before    [][]byte // whole chunks placed before fmt
	between   [][]byte // whole chunks placed between fmt and data
	dataSize  int64    // declared data size; −1 = the real size
	dataBytes []byte   // the sample bytes
}

// chunk builds a RIFF chunk with its pad byte.
func chunk(id string, body []byte) []byte {
	b := make([]byte, 0, 8+len(body)+1)
	b = append(b, id...)
	b = binary.LittleEndian.AppendUint32(b, uint32(len(body)))
	b = append(b, body...)
	if len(body)%2 == 1 {
		b = append(b, 0) // RIFF pads odd-sized chunks to an even length
	}
	return b
}

// buildWAV lays out a WAV file as the RIFF/WAVE specification describes:
// "RIFF" size "WAVE", then chunks; fmt holds format, channels, rate, byte
// rate, block align, bits per sample (and, for WAVE_FORMAT_EXTENSIBLE,
// cbSize 22, valid bits, channel mask and the sub-format GUID).
func buildWAV(tb testing.TB, s wavSpec) []byte {
	tb.Helper()
	le := binary.LittleEndian
	align := s.align
	if align == 0 {
		align = s.channels * ((s.bits + 7) / 8)
	}
	var f []byte
	f = le.AppendUint16(f, s.format)
	f = le.AppendUint16(f, uint16(s.channels))
	f = le.AppendUint32(f, s.rate)
	f = le.AppendUint32(f, s.rate*uint32(align))
	f = le.AppendUint16(f, uint16(align))
	f = le.AppendUint16(f, uint16(s.bits))
	if s.format == formatExtensible {
		f = le.AppendUint16(f, 22)
		f = le.AppendUint16(f, uint16(s.valid))
		f = le.AppendUint32(f, 0) // channel mask: unassigned
		f = le.AppendUint32(f, uint32(s.sub))
		f = append(f, guidTail...)
	}
	body := []byte("WAVE")
	for _, c := range s.before {
		body = append(body, c...)
	}
	body = append(body, chunk("fmt ", f)...)
	for _, c := range s.between {
		body = append(body, c...)
	}
	body = append(body, "data"...)
	size := s.dataSize
	if size < 0 {
		size = int64(len(s.dataBytes))
	}
	body = le.AppendUint32(body, uint32(size))
	body = append(body, s.dataBytes...)
	out := append([]byte("RIFF"), le.AppendUint32(nil, uint32(len(body)))...)
	return append(out, body...)
}

// pcmBytes encodes integer container values little-endian in bytesPer bytes
// (two's complement, low bytes first).
func pcmBytes(vals []int64, bytesPer int) []byte {
	var b []byte
	for _, v := range vals {
		u := uint64(v)
		for k := range bytesPer {
			b = append(b, byte(u>>(8*k)))
		}
	}
	return b
}

// floatBytes encodes float32 values little-endian.
func floatBytes(vals []float32) []byte {
	var b []byte
	for _, v := range vals {
		b = binary.LittleEndian.AppendUint32(b, math.Float32bits(v))
	}
	return b
}
