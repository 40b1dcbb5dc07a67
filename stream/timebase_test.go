package stream

import (
	"math/big"
	"testing"
	"time"
)

// bigTime is the obvious exact computation of base + idx/fs with math/big.
func bigTime(base time.Time, idx uint64, fsMilli uint64) time.Time {
	num := new(big.Int).Mul(new(big.Int).SetUint64(idx), big.NewInt(1_000_000_000_000)) // idx·1e9 ns·1000
	ns := new(big.Int).Quo(num, new(big.Int).SetUint64(fsMilli))
	return base.Add(time.Duration(ns.Int64()))
}

// TestClockPast32Bits drives the sample index past 2^31 and 2^32 and past
// 8.3 days at 12.8 kHz (2^32 samples at 12.8 kHz last 3.88 days; 8.3 days are
// 9.18e9 samples), where an int or float32 index would wrap or lose samples.
// It runs under qemu-arm in CI, where int is 32 bits.
func TestClockPast32Bits(t *testing.T) {
	base := time.Date(2026, 3, 1, 10, 0, 0, 0, time.UTC)
	cases := []struct {
		name string
		fs   float64
		idx  uint64
		src  string
	}{
		{"2^31-1", 12800, 1<<31 - 1, "largest int32"},
		{"2^31", 12800, 1 << 31, "int32 wrap"},
		{"2^32+7", 12800, 1<<32 + 7, "uint32 wrap"},
		{"8.3 days", 12800, uint64(8.3 * 86400 * 12800), "8.3 days at 12.8 kHz: past 2^33 samples, closed form"},
		{"1 year", 10240, 365 * 86400 * 10240, "a year unattended"},
		{"fractional rate", 10240.5, 9_000_000_123, "recorded rate with a fraction"},
	}
	for _, tc := range cases {
		t.Run(tc.name, func(t *testing.T) {
			c := NewClock(base, tc.fs)
			got := c.Time(tc.idx)
			want := bigTime(base, tc.idx, uint64(tc.fs*1000+0.5))
			if d := got.Sub(want); d < -time.Nanosecond || d > time.Nanosecond {
				t.Errorf("Time(%d) = %v, want %v (exact, math/big): off by %v (%s)", tc.idx, got, want, d, tc.src)
			}
			// Index is the exact inverse: Time truncates to the nanosecond,
			// so the first sample at or after Time(idx) is idx itself
			if back := c.Index(got); back != tc.idx {
				t.Errorf("Index(Time(%d)) = %d", tc.idx, back)
			}
		})
	}
}

func TestClockIndexBoundaries(t *testing.T) {
	base := time.Unix(0, 0).UTC()
	c := NewClock(base, 10240)
	for _, tc := range []struct {
		at   time.Duration
		want uint64
	}{
		{0, 0}, {10 * time.Second, 102400}, {time.Nanosecond, 1}, {-time.Second, 0},
		{100 * time.Microsecond, 2}, // 1.024 samples → the next whole sample is 2
	} {
		if got := c.Index(base.Add(tc.at)); got != tc.want {
			t.Errorf("Index(+%v) = %d, want %d (closed form ceil(t·fs))", tc.at, got, tc.want)
		}
	}
}

// TestClockIndexUnalignedBase: with a base whose sub-second part is not a
// whole number of samples (a live base taken from the system clock),
// Index stays the exact inverse of Time for weeks of samples; float
// arithmetic drifts off by one after days.
func TestClockIndexUnalignedBase(t *testing.T) {
	base := time.Date(2026, 3, 1, 10, 0, 0, 97_656, time.UTC)
	for _, fs := range []float64{10240, 12800, 10240.5} {
		c := NewClock(base, fs)
		for _, days := range []float64{0.01, 1, 24.5, 30, 400} {
			idx := uint64(days * 86400 * fs)
			for k := range uint64(50) {
				if back := c.Index(c.Time(idx + k)); back != idx+k {
					t.Fatalf("fs %v, day %v: Index(Time(%d)) = %d (exact inverse, math/big-free closed form)", fs, days, idx+k, back)
				}
			}
		}
	}
}
