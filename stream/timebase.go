package stream

import (
	"math"
	"math/bits"
	"time"
)

// Clock turns a sample index into wall time: base + index/fs, computed from a
// uint64 index by quotient and remainder (never by accumulating 1/fs, never
// in int, so it stays exact on 32-bit boards and after weeks of samples).
// The sample rate is held in millihertz so recorded rates such as 10240.5 Hz
// keep exact arithmetic. A Clock is a value and safe for concurrent use.
type Clock struct {
	base    time.Time
	fsMilli uint64
}

// NewClock returns a Clock for the given base time and sample rate in Hz.
func NewClock(base time.Time, fs float64) Clock {
	m := uint64(math.Round(fs * 1000))
	if m == 0 {
		m = 1
	}
	return Clock{base: base, fsMilli: m}
}

// Time returns the wall time of sample idx.
func (c Clock) Time(idx uint64) time.Time {
	sec, rem := mulDiv1000(idx, c.fsMilli)
	ns := rem * 1_000_000_000 / c.fsMilli // rem < fsMilli ≤ ~1e9, so no overflow
	return c.base.Add(time.Duration(sec) * time.Second).Add(time.Duration(ns))
}

// Index returns the first sample index whose time is at or after t
// (0 for times before the base): ceil(Δt·fs), in exact 128-bit integer
// arithmetic for any Δt.
func (c Clock) Index(t time.Time) uint64 {
	d := t.Sub(c.base)
	if d <= 0 {
		return 0
	}
	// idx = ceil(d[ns] · fsMilli / 1e12); d·fsMilli < 2^63·2^40 fits 128 bits
	// and the quotient fits 64 bits, so Div64 cannot overflow.
	hi, lo := bits.Mul64(uint64(d), c.fsMilli)
	q, r := bits.Div64(hi, lo, 1_000_000_000_000)
	if r != 0 {
		q++
	}
	return q
}

// Base returns the clock's base time.
func (c Clock) Base() time.Time { return c.base }

// SampleRate returns the rate in Hz the clock counts with.
func (c Clock) SampleRate() float64 { return float64(c.fsMilli) / 1000 }

// mulDiv1000 returns (idx·1000)/fsMilli as whole seconds and the remainder
// in units of 1/fsMilli seconds, without overflowing for any index below
// 2^64/1000.
func mulDiv1000(idx, fsMilli uint64) (sec, rem uint64) {
	q, r := idx/fsMilli, idx%fsMilli
	// idx·1000 = q·fsMilli·1000 + r·1000
	sec = q * 1000
	r *= 1000
	sec += r / fsMilli
	rem = r % fsMilli
	return sec, rem
}
