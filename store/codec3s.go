package store

import (
	"math"

	"github.com/gridloupe/gridloupe/metrics"
)

// recordVersionSlim marks the slim form the 3 s level is stored in: the
// full record but for the harmonics, whose magnitudes are IEEE 754
// binary16 (half precision: 11 significant bits, a relative error below
// 0.05 %) and whose angles are not kept (they decode as null), and the
// sequence components, kept for the fundamental only (the other orders
// decode as null). That is what the weekly evaluation and the alarms
// need of a 3 s value (THD, TDD and the per-order magnitudes), in about a
// third of the bytes, so a week fits the default store cap.
const recordVersionSlim = 5

// recordVersionSlimNoCrest is the slim form written before crest_factor
// (version 3); it decodes with crest_factor null.
const recordVersionSlimNoCrest = 3

// slimForm reports whether record version v is a slim 3 s record.
func slimForm(v byte) bool { return v == recordVersionSlim || v == recordVersionSlimNoCrest }

// appendSlimHarmonics appends the magnitudes of h as binary16.
func appendSlimHarmonics(b []byte, h []metrics.Harmonic) []byte {
	for j := range h {
		b = be.AppendUint16(b, toHalf(h[j].RMS))
	}
	return b
}

// slimHarmonics reads the magnitudes of h (orders from the layout); the
// angles are null.
func (r *reader) slimHarmonics(h []metrics.Harmonic, orders []int) {
	for j := range h {
		h[j].H = orders[j]
		h[j].RMS = fromHalf(r.u16())
		h[j].PhaseDeg = math.NaN()
	}
}

// Binary16 bit fields.
const (
	halfNaN     = 0x7e00
	halfInf     = 0x7c00
	halfMaxBits = 0x7bff // 65504
)

// toHalf rounds v to the nearest binary16 (ties to even), with NaN kept
// (the store's null) and values beyond 65504 stored as ±Inf.
func toHalf(v float64) uint16 {
	if v != v {
		return halfNaN
	}
	f := float32(v)
	bits := math.Float32bits(f)
	sign := uint16(bits>>16) & 0x8000
	a := math.Abs(float64(f))
	switch {
	case a == 0:
		return sign
	case a >= 65520: // rounds beyond the largest finite half
		return sign | halfInf
	case a < 0x1p-14: // subnormal: units of 2^-24
		return sign | uint16(math.RoundToEven(a*0x1p24))
	}
	exp := int(bits>>23&0xff) - 127 + 15
	mant := bits & 0x7fffff
	// round the 23-bit mantissa to 10 bits, ties to even
	m := mant >> 13
	rest := mant & 0x1fff
	if rest > 0x1000 || (rest == 0x1000 && m&1 == 1) {
		m++
		if m == 0x400 {
			m = 0
			exp++
		}
	}
	if exp >= 31 {
		return sign | halfInf
	}
	return sign | uint16(exp)<<10 | uint16(m)
}

// fromHalf converts a binary16 to float64.
func fromHalf(h uint16) float64 {
	sign := 1.0
	if h&0x8000 != 0 {
		sign = -1
	}
	exp := int(h >> 10 & 0x1f)
	mant := float64(h & 0x3ff)
	switch exp {
	case 0:
		return sign * mant * 0x1p-24
	case 31:
		if mant != 0 {
			return math.NaN()
		}
		return math.Inf(int(sign))
	}
	return sign * (1 + mant/1024) * math.Ldexp(1, exp-15)
}

// slimBytes is the size of a 3 s record in the slim form for layout s.
func slimBytes(s *metrics.Setup) int {
	nch, nord := len(s.Channels), len(s.Orders)
	n := RecordBytes(s) - nch*nord*(4+2) + nch*nord*2
	if s.Wiring == metrics.Wye || s.Wiring == metrics.Delta {
		for _, k := range []metrics.Kind{metrics.Voltage, metrics.Current} {
			if s.HasSequence(k) {
				n -= (nord - 1) * 3 * 4
			}
		}
	}
	return n
}

// RecordBytesAt is RecordBytes for the records of level iv: the 3 s level
// is stored slim.
func RecordBytesAt(s *metrics.Setup, iv metrics.Interval) int {
	if iv == metrics.Int3s {
		return slimBytes(s)
	}
	return RecordBytes(s)
}
