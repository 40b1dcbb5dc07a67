package goertzel

import (
	"errors"
	"math"
	"math/cmplx"
	"strings"
	"testing"
)

// splitRelTol bounds the difference between block splittings of the same
// window, relative to the signal level: the arithmetic is identical per
// sample, so only a compiler's choice to fuse multiply-adds could differ.
const splitRelTol = 1e-12

// sixPulse is the odd non-triplen orders to 49: 1 and 6k ± 1.
var sixPulse = []int{1, 5, 7, 11, 13, 17, 19, 23, 25, 29, 31, 35, 37, 41, 43, 47, 49}

// bankPhasors runs a fresh bank over x in one Write.
func bankPhasors(tb testing.TB, orders []int, w float64, x []float64) []complex128 {
	tb.Helper()
	b := mustBank(tb, orders)
	b.Reset(w)
	b.Write(x)
	dst := make([]complex128, b.Len())
	b.Phasors(dst)
	return dst
}

// drive50 is a distorted current at the fundamental w: 1/h harmonics of a
// six-pulse front end (closed form) at assorted angles, plus noise.
func drive50(n int, w float64, seed uint64) []float64 {
	var tones []tone
	for _, h := range sixPulse {
		tones = append(tones, tone{w: float64(h) * w, rms: 45.8 / float64(h), phase: 0.37 * float64(h)})
	}
	return synth(n, tones, 0.5, newRand(seed))
}

func TestBankMatchesDirectDFT(t *testing.T) {
	t.Parallel()
	orderSets := map[string][]int{
		"1":         {1},
		"1,2":       {1, 2},
		"1..3":      seq(1, 3),
		"1..5":      seq(1, 5),
		"1..13":     seq(1, 13),
		"six-pulse": sixPulse,
		"1..50":     seq(1, 50),
	}
	// 50 Hz and 50.1 Hz at 10.24 kHz, 60 Hz at 10.24 kHz: the windows below
	// hold 10/12 cycles only roughly, so h·w·N is not an integer.
	ws := []float64{50.0 / 10240, 50.1 / 10240, 60.0 / 10240, 12.37 / 2048}
	lengths := []int{1, 2, 3, 4, 5, 2047, 2048, 2049, 2039, 1707}
	for name, orders := range orderSets {
		for _, w := range ws {
			for _, n := range lengths {
				x := drive50(n, w, uint64(n))
				scale := math.Sqrt2 * rmsOf(x)
				got := bankPhasors(t, orders, w, x)
				for i, h := range orders {
					// src: definition X = (√2/N)·Σ x[n]·e^{−j2π·h·w·n} (doc.go), direct sum.
					want := directDFT(x, float64(h)*w)
					if !closeTo(got[i], want, dftRelTol*scale) {
						t.Errorf("orders %s w=%g N=%d h=%d: bank %v, direct %v, |Δ| %g",
							name, w, n, h, got[i], want, cmplx.Abs(got[i]-want))
					}
				}
			}
		}
	}
}

func TestBankBlockSplitting(t *testing.T) {
	t.Parallel()
	const w = 50.1 / 10240
	x := drive50(2044, w, 7)
	scale := math.Sqrt2 * rmsOf(x)
	for _, orders := range [][]int{{3}, seq(1, 2), seq(1, 3), sixPulse, seq(1, 50)} {
		// src: Write's contract (any block size; common practice, no source):
		// the reference is one Write of the whole window.
		want := bankPhasors(t, orders, w, x)

		b := mustBank(t, orders)
		got := make([]complex128, b.Len())
		check := func(how string) {
			t.Helper()
			b.Phasors(got)
			for i := range got {
				if !closeTo(got[i], want[i], splitRelTol*scale) {
					t.Errorf("%s, orders %v, h=%d: %v, want %v", how, orders, orders[i], got[i], want[i])
				}
			}
		}

		b.Reset(w)
		for i := range x {
			b.Write(x[i : i+1])
		}
		check("one sample per Write")

		b.Reset(w)
		rng := newRand(11)
		for i := 0; i < len(x); {
			k := min(len(x)-i, rng.IntN(40))
			b.Write(x[i : i+k])
			i += k
		}
		check("random blocks 0..39")
		if b.N() != len(x) {
			t.Errorf("N() = %d, want %d", b.N(), len(x))
		}
	}
}

func TestBankGroupsMatchPhasor(t *testing.T) {
	t.Parallel()
	// Every group size (4, 3, 2, 1) against the single-order Phasor.
	const w = 60.0 / 10240
	x := drive50(1707, w, 3)
	scale := math.Sqrt2 * rmsOf(x)
	for m := 1; m <= 9; m++ {
		orders := seq(1, m)
		got := bankPhasors(t, orders, w, x)
		for i, h := range orders {
			// src: Phasor is the same recurrence one order at a time
			// (cross-checked against the direct DFT above).
			want := Phasor(x, float64(h)*w)
			if !closeTo(got[i], want, splitRelTol*scale) {
				t.Errorf("%d orders, h=%d: bank %v, Phasor %v", m, h, got[i], want)
			}
		}
	}
}

func TestBankMidWindowRead(t *testing.T) {
	t.Parallel()
	const w = 50.0 / 10240
	x := drive50(2048, w, 5)
	scale := math.Sqrt2 * rmsOf(x)
	want := bankPhasors(t, sixPulse, w, x)

	b := mustBank(t, sixPulse)
	b.Reset(w)
	mid := make([]complex128, b.Len())
	b.Write(x[:1000])
	b.Phasors(mid)
	for i, h := range sixPulse {
		// src: definition over the first 1000 samples, direct sum.
		if d := directDFT(x[:1000], float64(h)*w); !closeTo(mid[i], d, dftRelTol*scale) {
			t.Errorf("mid-window h=%d: %v, want %v", h, mid[i], d)
		}
	}
	b.Write(x[1000:])
	got := make([]complex128, b.Len())
	b.Phasors(got)
	for i := range got {
		// src: API contract: Phasors does not disturb the state.
		if !closeTo(got[i], want[i], splitRelTol*scale) {
			t.Errorf("after mid read h=%d: %v, want %v", sixPulse[i], got[i], want[i])
		}
	}
}

func TestBankResetClears(t *testing.T) {
	t.Parallel()
	const w = 50.0 / 10240
	x := drive50(2048, w, 9)
	scale := math.Sqrt2 * rmsOf(x)
	want := bankPhasors(t, seq(1, 7), w, x)

	b := mustBank(t, seq(1, 7))
	b.Reset(0.01)
	b.Write(drive50(500, 0.01, 1))
	b.Reset(w)
	got := make([]complex128, b.Len())
	b.Phasors(got)
	for i, v := range got {
		// src: API contract: before any sample the phasors are 0.
		if v != 0 {
			t.Errorf("after Reset, before Write: h=%d is %v, want 0", i+1, v)
		}
	}
	b.Write(x)
	b.Phasors(got)
	for i := range got {
		// src: API contract: Reset starts a new window (reference: fresh bank).
		if !closeTo(got[i], want[i], splitRelTol*scale) {
			t.Errorf("h=%d: %v, want %v", i+1, got[i], want[i])
		}
	}
}

func TestNewBankErrors(t *testing.T) {
	t.Parallel()
	tests := []struct {
		name   string
		orders []int
		src    string
	}{
		{"empty", nil, "API contract: at least one order"},
		{"zero", []int{0, 1}, "API contract: orders ≥ 1 (DC is not an order)"},
		{"negative", []int{-1}, "API contract: orders ≥ 1"},
		{"descending", []int{5, 3}, "API contract: ascending"},
		{"duplicate", []int{1, 5, 5}, "API contract: unique"},
		{"too high", []int{1, MaxOrder + 1}, "API contract: ≤ MaxOrder"},
	}
	for _, tc := range tests {
		t.Run(tc.name, func(t *testing.T) {
			t.Parallel()
			b, err := NewBank(tc.orders)
			if !errors.Is(err, ErrOrders) || b != nil {
				t.Fatalf("NewBank(%v) = %v, %v; want nil, ErrOrders [src: %s]", tc.orders, b, err, tc.src)
			}
		})
	}
	if _, err := NewBank(seq(1, MaxOrder)); err != nil {
		t.Fatalf("NewBank(1..%d): %v", MaxOrder, err)
	}
}

func TestBankAccessors(t *testing.T) {
	t.Parallel()
	in := []int{1, 5, 7}
	b := mustBank(t, in)
	in[0] = 99 // NewBank copies
	o := b.Orders()
	o[1] = 98 // Orders returns a copy
	if got := b.Orders(); len(got) != 3 || got[0] != 1 || got[1] != 5 || got[2] != 7 {
		t.Fatalf("Orders() = %v, want [1 5 7]", got)
	}
	if b.Len() != 3 || b.N() != 0 {
		t.Fatalf("Len() = %d, N() = %d; want 3, 0", b.Len(), b.N())
	}
}

func TestBankPhasorsPanicsOnLength(t *testing.T) {
	t.Parallel()
	b := mustBank(t, []int{1, 5})
	b.Reset(0.01)
	defer func() {
		r := recover()
		msg, ok := r.(string)
		if !ok || !strings.HasPrefix(msg, "goertzel: ") {
			t.Fatalf("recover() = %v, want a string starting with %q", r, "goertzel: ")
		}
	}()
	b.Phasors(make([]complex128, 1))
}

// FuzzBankBlocks feeds arbitrary samples in arbitrary blocks: no panic, and
// any split agrees with one Write (and with Phasor) while values are finite.
func FuzzBankBlocks(f *testing.F) {
	f.Add([]byte{0, 1, 2, 3, 4, 5, 6, 7, 8, 9}, uint8(3), 0.013)
	f.Add([]byte("north weir dc-2 pump drive current"), uint8(1), 50.0/10240)
	f.Add([]byte{255, 0, 255, 0}, uint8(0), 0.49)
	f.Fuzz(func(t *testing.T, data []byte, block uint8, w float64) {
		if math.IsNaN(w) || math.IsInf(w, 0) || math.Abs(w) > 1e6 {
			t.Skip()
		}
		x := make([]float64, len(data))
		for i, c := range data {
			x[i] = float64(int(c) - 128)
		}
		orders := seq(1, 6)
		want := bankPhasors(t, orders, w, x)
		b := mustBank(t, orders)
		b.Reset(w)
		bs := int(block%16) + 1
		for i := 0; i < len(x); i += bs {
			b.Write(x[i:min(len(x), i+bs)])
		}
		got := make([]complex128, b.Len())
		b.Phasors(got)
		scale := math.Sqrt2*rmsOf(x) + 1
		for i, h := range orders {
			if !closeTo(got[i], want[i], splitRelTol*scale) {
				t.Fatalf("h=%d block %d: %v, want %v", h, bs, got[i], want[i])
			}
			if p := Phasor(x, float64(h)*w); !closeTo(got[i], p, splitRelTol*scale) {
				t.Fatalf("h=%d: bank %v, Phasor %v", h, got[i], p)
			}
		}
		// src: vecRelTol (bank_vec_test.go): the pure-Go loops against the
		// kernels, here relative to the signal level.
		g := writeBlocks(goBank(t, orders), w, x, bs)
		for i, h := range orders {
			if !closeTo(got[i], g[i], vecRelTol*scale) {
				t.Fatalf("h=%d block %d: kernels %v, Go loops %v", h, bs, got[i], g[i])
			}
		}
	})
}
