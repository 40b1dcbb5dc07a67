package store

import (
	"math"
	"math/rand/v2"
	"testing"
	"time"

	"github.com/gridloupe/gridloupe/metrics"
)

// relHalf is binary16's largest relative rounding error for normal
// numbers: half an ulp of an 11-bit significand, 2^-11 (IEEE 754-2008
// binary16, closed form).
const relHalf = 0x1p-11

// TestHalf checks the binary16 conversion at values whose encodings are
// fixed by IEEE 754-2008 binary16 (from memory, each recomputed by hand
// from sign, 5-bit exponent with bias 15 and 10-bit fraction).
func TestHalf(t *testing.T) {
	t.Parallel()
	for _, c := range []struct {
		v    float64
		bits uint16
		back float64
	}{
		{1, 0x3c00, 1},
		{-2, 0xc000, -2},
		{65504, 0x7bff, 65504},                 // largest finite
		{0x1p-24, 0x0001, 0x1p-24},             // smallest subnormal
		{0x1p-14, 0x0400, 0x1p-14},             // smallest normal
		{0.1, 0x2e66, 0.0999755859375},         // 1.6·2^-4 rounded: 0x266/1024
		{1.0 / 3, 0x3555, 0.333251953125},      // ties not involved
		{1 + 0x1p-11, 0x3c00, 1},               // a tie rounds to even
		{1 + 3*0x1p-11, 0x3c02, 1 + 2*0x1p-10}, // a tie rounds to even (up)
		{65520, 0x7c00, math.Inf(1)},           // beyond the largest: Inf
		{0, 0x0000, 0},
	} {
		if got := toHalf(c.v); got != c.bits {
			t.Errorf("toHalf(%v) = %#04x, want %#04x", c.v, got, c.bits)
		}
		if got := fromHalf(c.bits); got != c.back {
			t.Errorf("fromHalf(%#04x) = %v, want %v", c.bits, got, c.back)
		}
	}
	if !math.IsNaN(fromHalf(toHalf(math.NaN()))) {
		t.Error("NaN (the store's null) does not survive")
	}
	// every finite half survives a round trip
	for h := range uint16(0x7c00) {
		if got := toHalf(fromHalf(h)); got != h {
			t.Fatalf("toHalf(fromHalf(%#04x)) = %#04x", h, got)
		}
	}
}

// TestSlimRoundTrip: a 3 s record in the slim form keeps every value of
// the full form but the harmonics, whose magnitudes come back within
// binary16's rounding (and pct, pct_il with them), whose angles are null,
// and the sequence components beyond the fundamental, which are null.
func TestSlimRoundTrip(t *testing.T) {
	t.Parallel()
	s := setup8(allOrders())
	rng := rand.New(rand.NewPCG(3, 4))
	for i := range 20 {
		want := newRecord(s)
		fillRecord(want, s, rng, t0.Add(time.Duration(i)*3*time.Second), true)
		b, err := encodeRec(nil, want, 5, s, true)
		if err != nil {
			t.Fatal(err)
		}
		est := RecordBytesAt(s, metrics.Int3s)
		if !want.HasFreq10s {
			est -= 4 // the estimate counts the 10 s frequency
		}
		if got := len(b) + 16 + leafElemOverhead; got != est {
			t.Fatalf("slim record %d bytes with overhead, RecordBytesAt says %d", got, est)
		}
		got, err := decodeRecord(b, metrics.Int3s, s)
		if err != nil {
			t.Fatal(err)
		}
		for c := range want.Channels {
			w, g := &want.Channels[c], &got.Channels[c]
			if !near(w.RMS, g.RMS, relF32) || !near(w.THDH50Pct, g.THDH50Pct, relF32) || !near(w.TDDH50Pct, g.TDDH50Pct, relF32) {
				t.Errorf("ch %d: rms/thd/tdd changed: %+v vs %+v", c, g, w)
			}
			for j := range w.H {
				wv, gv := w.H[j].RMS, g.H[j].RMS
				if math.IsNaN(wv) != math.IsNaN(gv) || (!math.IsNaN(wv) && math.Abs(wv) >= 0x1p-14 && math.Abs(wv) < 65504 && !near(wv, gv, relHalf+relF32)) {
					t.Errorf("ch %d h%d: %v, want %v within %g", c, g.H[j].H, gv, wv, relHalf)
				}
				if !math.IsNaN(g.H[j].PhaseDeg) {
					t.Errorf("ch %d h%d: angle %v kept", c, g.H[j].H, g.H[j].PhaseDeg)
				}
			}
		}
		for k, pair := range [2][2][]metrics.Seq{{want.SeqV, got.SeqV}, {want.SeqI, got.SeqI}} {
			w, g := pair[0], pair[1]
			if len(g) != len(w) || !near(w[0].Pos, g[0].Pos, relF32) || !near(w[0].Neg, g[0].Neg, relF32) || !math.IsNaN(g[1].Pos) {
				t.Errorf("sequence %d: fundamental %+v vs %+v, h2 %+v", k, g[0], w[0], g[1])
			}
		}
		if !near(want.Total.P, got.Total.P, relF32) || !near(want.Phases[0].DPF, got.Phases[0].DPF, relF32) || !near(want.UnbV, got.UnbV, relF32) {
			t.Errorf("powers or unbalance changed")
		}
	}
}

// TestSlimSize: the slim form is under a third of the full one for 8
// channels with all 50 orders and both sequence sets (the store's own
// budget case, RecordBudget8Ch50), and the figures the README quotes.
func TestSlimSize(t *testing.T) {
	t.Parallel()
	s := setup8(allOrders())
	full, slim := RecordBytesAt(s, metrics.Int10min), RecordBytesAt(s, metrics.Int3s)
	if slim*3 > full {
		t.Errorf("slim %d bytes, full %d: want under a third", slim, full)
	}
	t.Logf("8 channels, 50 orders: full %d bytes, slim %d bytes (with key and leaf overhead); a day of 3 s values %.1f MB",
		full, slim, float64(slim)*28800/1e6)
}
