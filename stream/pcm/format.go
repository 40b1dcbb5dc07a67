package pcm

import (
	"encoding/binary"
	"math"
)

// Format is a sample encoding.
type Format uint8

// Sample formats (DESIGN "Sources"). The values are GLF1's format codes.
const (
	S16LE Format = iota + 1 // signed 16-bit, 2 bytes
	S24LE                   // signed 24-bit, 3 bytes
	S32LE                   // signed 32-bit, 4 bytes
	F32LE                   // IEEE 754 float32, 4 bytes
)

var formatNames = [...]string{S16LE: "s16le", S24LE: "s24le", S32LE: "s32le", F32LE: "f32le"}

// FormatNames lists the spellings ParseFormat accepts, for help and errors.
func FormatNames() []string { return []string{"s16le", "s24le", "s32le", "f32le"} }

// ParseFormat returns the format spelled s (lower case, as FormatNames).
func ParseFormat(s string) (Format, bool) {
	for f, n := range formatNames {
		if n != "" && n == s {
			return Format(f), true
		}
	}
	return 0, false
}

// String returns the format's spelling.
func (f Format) String() string {
	if int(f) < len(formatNames) && formatNames[f] != "" {
		return formatNames[f]
	}
	return "unknown"
}

// Valid reports whether f is one of the four formats.
func (f Format) Valid() bool { return f >= S16LE && f <= F32LE }

// Bytes returns the size of one sample.
func (f Format) Bytes() int {
	switch f {
	case S16LE:
		return 2
	case S24LE:
		return 3
	case S32LE, F32LE:
		return 4
	}
	return 0
}

// Decode converts the whole samples in b to raw values in dst: integer
// formats give the signed count, f32le the stored value. dst must hold
// len(b)/f.Bytes() values. It does not allocate.
func (f Format) Decode(dst []float64, b []byte) {
	le := binary.LittleEndian
	switch f {
	case S16LE:
		for i := range len(b) / 2 {
			dst[i] = float64(int16(le.Uint16(b[2*i:])))
		}
	case S24LE:
		for i := range len(b) / 3 {
			p := b[3*i : 3*i+3]
			u := uint32(p[0])<<8 | uint32(p[1])<<16 | uint32(p[2])<<24
			dst[i] = float64(int32(u) >> 8)
		}
	case S32LE:
		for i := range len(b) / 4 {
			dst[i] = float64(int32(le.Uint32(b[4*i:])))
		}
	case F32LE:
		for i := range len(b) / 4 {
			dst[i] = float64(math.Float32frombits(le.Uint32(b[4*i:])))
		}
	}
}

// Encode is Decode's inverse for senders and tests: it writes the values
// in src to b (len(src)·f.Bytes() bytes), rounding and saturating integer
// formats to their range.
func (f Format) Encode(b []byte, src []float64) {
	le := binary.LittleEndian
	for i, v := range src {
		switch f {
		case S16LE:
			le.PutUint16(b[2*i:], uint16(int16(clampRound(v, math.MinInt16, math.MaxInt16))))
		case S24LE:
			u := uint32(int32(clampRound(v, -1<<23, 1<<23-1)))
			b[3*i], b[3*i+1], b[3*i+2] = byte(u), byte(u>>8), byte(u>>16)
		case S32LE:
			le.PutUint32(b[4*i:], uint32(int32(clampRound(v, math.MinInt32, math.MaxInt32))))
		case F32LE:
			le.PutUint32(b[4*i:], math.Float32bits(float32(v)))
		}
	}
}

func clampRound(v, lo, hi float64) float64 {
	if v != v {
		return 0
	}
	return max(lo, min(hi, math.Round(v)))
}
