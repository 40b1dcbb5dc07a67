package goertzel

import (
	"errors"
	"math"
	"math/cmplx"
	"strings"
	"testing"
)

// slideDriftTol bounds |Sliding − exact DFT of the current window| relative
// to the signal's largest phasor over a long run: the README's promised
// bound for "no drift" (the figure in "How the figures are checked").
const slideDriftTol = 1e-6

// slideDriftOwn is the project's own bound, about twice the worst case
// measured over 10^7 samples (1.3e-14; the periodic re-sum keeps it there),
// so a re-sum that stops working fails long before slideDriftTol would.
const slideDriftOwn = 3e-14

// slideMatchTol bounds Sliding against Bank/Phasor on the same window,
// relative to the signal level: two float64 evaluations of one sum.
const slideMatchTol = 1e-9

// ssRelTol bounds SumSquares against an exact re-sum of the window, relative
// to Σx² itself: one window of float64 additions and removals.
const ssRelTol = 1e-9

// history keeps the last n samples pushed, as the reference for Sliding.
type history struct {
	buf   []float64
	count int
}

func newHistory(n int) *history { return &history{buf: make([]float64, n)} }

func (h *history) push(x float64) {
	h.buf[h.count%len(h.buf)] = x
	h.count++
}

// window returns the last n samples, oldest first, zero-padded at the start
// before n samples have been pushed (the Sliding doc's convention).
func (h *history) window(dst []float64) []float64 {
	n := len(h.buf)
	dst = dst[:n]
	for i := range n {
		m := h.count - n + i // absolute index
		if m < 0 {
			dst[i] = 0
			continue
		}
		dst[i] = h.buf[m%n]
	}
	return dst
}

func TestSlidingLongRunDrift(t *testing.T) {
	t.Parallel()
	// 10^7 samples takes about a second; -short and the (tenfold slower)
	// race detector run 10^6.
	total := 10_000_000
	if testing.Short() || raceEnabled {
		total = 1_000_000
	}
	const (
		n      = 256
		checks = 400
	)
	bins := []int{1, 5, 7, 13}
	s := mustSliding(t, n, bins)
	h := newHistory(n)
	rng := newRand(2024)

	// A fundamental of 230 V RMS whose amplitude wanders, harmonics, noise,
	// and rare large spikes (switching transients) that strain the running sums.
	const fund = 230.0
	largest := fund * 1.2 // the fundamental's RMS never exceeds 1.2·230 V
	win := make([]float64, n)
	var worst float64
	check := func(at int) {
		w := h.window(win)
		for i, k := range bins {
			// src: definition X = (√2/N)·Σ x[n]·e^{−j2π(k/N)n} over the
			// current window (doc.go), direct sum.
			want := directDFT(w, float64(k)/n)
			got := s.Phasor(i)
			d := cmplx.Abs(got-want) / largest
			worst = max(worst, d)
			if d > slideDriftTol {
				t.Fatalf("sample %d, bin %d: sliding %v, exact %v, |Δ|/largest = %g", at, k, got, want, d)
			}
		}
		// src: definition Σx² over the window, direct sum.
		var ss float64
		for _, v := range w {
			ss += v * v
		}
		if got := s.SumSquares(); math.Abs(got-ss) > ssRelTol*ss {
			t.Fatalf("sample %d: SumSquares %g, exact %g", at, got, ss)
		}
	}
	every := total / checks
	for m := range total {
		a := fund * (1 + 0.2*math.Sin(2*math.Pi*float64(m)/1e5))
		ph := 2 * math.Pi * float64(m%n) / n
		x := math.Sqrt2 * (a*math.Cos(ph+0.3) + 0.2*a*math.Cos(5*ph-1) + 0.1*a*math.Cos(7*ph+2))
		x += 3 * (2*rng.Float64() - 1)
		if rng.IntN(50_000) == 0 {
			x += 1e5 * (2*rng.Float64() - 1)
		}
		s.Push(x)
		h.push(x)
		if (m+1)%every == 0 || m == total-1 || m < 3*n && m%37 == 0 {
			check(m)
		}
	}
	check(total) // at the end
	if s.Count() != uint64(total) {
		t.Fatalf("Count() = %d, want %d", s.Count(), total)
	}
	t.Logf("%d samples: worst |Δ|/largest = %.3g", total, worst)
	if worst > slideDriftOwn {
		t.Errorf("worst |Δ|/largest = %.3g over the project's own bound %.3g (twice the measured worst case)", worst, slideDriftOwn)
	}
}

func TestSlidingMatchesBank(t *testing.T) {
	t.Parallel()
	for _, n := range []int{3, 64, 204, 2048} {
		bins := []int{1}
		for k := 2; 2*k < n && len(bins) < 9; k += 2 {
			bins = append(bins, k)
		}
		s := mustSliding(t, n, bins)
		// 3.5 windows of a distorted wave, then compare on the last window.
		x := drive50(7*n/2, 1/float64(n), uint64(n))
		s.Write(x)
		last := x[len(x)-n:]
		scale := math.Sqrt2 * rmsOf(last)
		b := mustBank(t, bins)
		b.Reset(1 / float64(n))
		b.Write(last)
		fromBank := make([]complex128, b.Len())
		b.Phasors(fromBank)
		for i, k := range bins {
			got := s.Phasor(i)
			// src: Bank with w = 1/N and order k is bin k of the same N samples
			// (Bank is cross-checked against the direct DFT and gonum's FFT).
			if !closeTo(got, fromBank[i], slideMatchTol*scale) {
				t.Errorf("N=%d k=%d: sliding %v, bank %v", n, k, got, fromBank[i])
			}
			// src: Phasor(window, k/N), the single-filter form.
			if p := Phasor(last, float64(k)/float64(n)); !closeTo(got, p, slideMatchTol*scale) {
				t.Errorf("N=%d k=%d: sliding %v, Phasor %v", n, k, got, p)
			}
		}
	}
}

func TestSlidingZeroPadded(t *testing.T) {
	t.Parallel()
	const n = 128
	bins := []int{1, 3, 63}
	s := mustSliding(t, n, bins)
	x := drive50(n, 1.0/n, 4)
	scale := math.Sqrt2 * rmsOf(x)
	pad := make([]float64, n)
	for m := 1; m < n; m += 13 {
		s.Reset()
		s.Write(x[:m])
		// src: documented convention: missing oldest samples are zeros, the
		// angle is at the (virtual) oldest sample; reference by direct DFT.
		clear(pad)
		copy(pad[n-m:], x[:m])
		for i, k := range bins {
			want := directDFT(pad, float64(k)/n)
			if got := s.Phasor(i); !closeTo(got, want, slideMatchTol*scale) {
				t.Errorf("%d samples, k=%d: %v, want %v", m, k, got, want)
			}
		}
	}
}

func TestSlidingResumRemovesDrift(t *testing.T) {
	t.Parallel()
	// A 1e12 spike leaves rounding debris in the running sums when it is
	// subtracted again (about 1e12·2⁻⁵³ ≈ 1e-4 in Y, 1e24·2⁻⁵³ ≈ 1e8 in Σx²).
	// The periodic re-sum must remove it; before the re-sum it is visible,
	// which shows this test can see drift at all.
	const (
		n    = 64
		tiny = 1e-12 // relative: exact re-sum of a 64-sample window
	)
	bins := []int{1, 3}
	s := mustSliding(t, n, bins)
	h := newHistory(n)
	sine := func(m int) float64 { return math.Sqrt2 * math.Cos(2*math.Pi*float64(m%n)/n) }
	push := func(x float64) { s.Push(x); h.push(x) }
	win := make([]float64, n)
	errNow := func() float64 {
		w := h.window(win)
		var e float64
		for i, k := range bins {
			e = max(e, cmplx.Abs(s.Phasor(i)-directDFT(w, float64(k)/n)))
		}
		return e
	}

	m := 0
	for ; m < 10; m++ {
		push(sine(m))
	}
	push(1e12)
	m++
	for ; m < 10+2*n; m++ { // the spike has left the window
		push(sine(m))
	}
	if e := errNow(); e < 1e-9 {
		t.Logf("note: spike debris only %g before re-sum", e)
	}
	var ss float64
	for _, v := range h.window(win) {
		ss += v * v
	}
	before := math.Abs(s.SumSquares() - ss)
	if before < 1 {
		t.Fatalf("Σx² error after a 1e12 spike left = %g; expected visible rounding debris (≈1e8) before the re-sum", before)
	}
	// Run to the next periodic re-sum (at most resumWindows·n pushes).
	for range resumWindows * n {
		push(sine(m))
		m++
	}
	// src: the unit-RMS fundamental bin of √2·cos over whole cycles is 1
	// (closed form), so |Δ| ≤ tiny is relative to 1.
	if e := errNow(); e > tiny {
		t.Fatalf("after the periodic re-sum: |Δ| = %g, want ≤ %g", e, tiny)
	}
	ss = 0
	for _, v := range h.window(win) {
		ss += v * v
	}
	if d := math.Abs(s.SumSquares() - ss); d > tiny*ss {
		t.Fatalf("after the periodic re-sum: Σx² off by %g (exact %g)", d, ss)
	}
}

func TestSlidingNaNRecovers(t *testing.T) {
	t.Parallel()
	const n = 64
	s := mustSliding(t, n, []int{1})
	x := drive50(4*n, 1.0/n, 8)
	s.Write(x[:n])
	s.Push(math.NaN())
	if !cmplx.IsNaN(s.Phasor(0)) {
		t.Fatalf("with a NaN in the window: %v, want NaN", s.Phasor(0))
	}
	s.Write(x[n : 2*n]) // the NaN has just left
	last := x[n : 2*n]
	// src: definition over the last window, direct sum; the design flags
	// bad_sample windows, but a NaN must not poison the filter forever.
	want := directDFT(last, 1.0/n)
	if got := s.Phasor(0); !closeTo(got, want, slideMatchTol*math.Sqrt2*rmsOf(last)) {
		t.Fatalf("after the NaN left: %v, want %v", got, want)
	}
	if math.IsNaN(s.SumSquares()) {
		t.Fatalf("SumSquares still NaN after the NaN left")
	}
}

func TestSlidingUrmsHalf(t *testing.T) {
	t.Parallel()
	// One-cycle window (fs = 6400 Hz, 50 Hz: 128 samples) over a sine of
	// 230 V RMS: sqrt(Σx²/N) = 230 at every half-cycle read.
	const (
		n   = 128
		tol = 1e-9 // relative: float64 sums over one cycle
	)
	s := mustSliding(t, n, []int{1})
	for m := range 10 * n {
		s.Push(230 * math.Sqrt2 * math.Sin(2*math.Pi*float64(m)/n))
		if m >= n-1 && (m+1)%(n/2) == 0 {
			// src: closed form (sine RMS = peak/√2) and IEC 61000-4-30
			// Urms(1/2): one-cycle RMS refreshed every half cycle [confirmed].
			if u := math.Sqrt(s.SumSquares() / n); math.Abs(u-230) > tol*230 {
				t.Fatalf("sample %d: Urms(1/2) = %.12g, want 230", m, u)
			}
		}
	}
}

func TestNewSlidingErrors(t *testing.T) {
	t.Parallel()
	tests := []struct {
		name string
		n    int
		bins []int
		want error
		src  string
	}{
		{"zero window", 0, []int{1}, ErrWindow, "API contract: n ≥ 1"},
		{"huge window", MaxWindow + 1, []int{1}, ErrWindow, "API contract: n ≤ MaxWindow"},
		{"no bins", 64, nil, ErrBins, "API contract: at least one bin"},
		{"DC bin", 64, []int{0}, ErrBins, "API contract: k ≥ 1"},
		{"Nyquist bin", 64, []int{32}, ErrBins, "API contract: k < n/2 (the RMS convention fails at Nyquist)"},
		{"window too short for any bin", 2, []int{1}, ErrBins, "API contract: k < n/2"},
	}
	for _, tc := range tests {
		t.Run(tc.name, func(t *testing.T) {
			t.Parallel()
			s, err := NewSliding(tc.n, tc.bins)
			if !errors.Is(err, tc.want) || s != nil {
				t.Fatalf("NewSliding(%d, %v) = %v, %v; want nil, %v [src: %s]", tc.n, tc.bins, s, err, tc.want, tc.src)
			}
		})
	}
}

func TestSlidingAccessorsAndPanic(t *testing.T) {
	t.Parallel()
	in := []int{5, 1}
	s := mustSliding(t, 16, in)
	in[0] = 7
	if b := s.Bins(); len(b) != 2 || b[0] != 5 || b[1] != 1 || s.N() != 16 || s.Count() != 0 {
		t.Fatalf("Bins() = %v, N() = %d, Count() = %d; want [5 1], 16, 0", b, s.N(), s.Count())
	}
	s.Push(1)
	s.Reset()
	if s.Count() != 0 || s.SumSquares() != 0 || s.Phasor(0) != 0 {
		t.Fatalf("after Reset: Count %d, SumSquares %g, Phasor %v; want zeros", s.Count(), s.SumSquares(), s.Phasor(0))
	}
	defer func() {
		msg, ok := recover().(string)
		if !ok || !strings.HasPrefix(msg, "goertzel: ") {
			t.Fatalf("Phasor(2) should panic with a goertzel: message, got %q", msg)
		}
	}()
	s.Phasor(2)
}
