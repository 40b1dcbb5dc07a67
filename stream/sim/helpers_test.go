package sim_test

import (
	"errors"
	"io"
	"math"
	"math/cmplx"
	"testing"

	"github.com/gridloupe/gridloupe/stream/sim"
)

// idealConfig is North Weir DC-2 with no wander and no noise: the harmonic
// content is exactly the model's.
func idealConfig() sim.Config {
	cfg := sim.DefaultConfig()
	cfg.NoWander, cfg.NoNoise = true, true
	cfg.Filter = sim.FilterProfile{}
	cfg.Dips = nil
	return cfg
}

func newSource(tb testing.TB, cfg sim.Config) *sim.Source {
	tb.Helper()
	s, err := sim.New(cfg)
	if err != nil {
		tb.Fatalf("New: %v", err)
	}
	return s
}

// readFrames reads exactly n frames of nch channels in chunks of up to
// chunk frames.
func readFrames(tb testing.TB, s *sim.Source, nch, n, chunk int) []float64 {
	tb.Helper()
	out := make([]float64, n*nch)
	for got, calls := 0, 0; got < n; calls++ {
		if calls > n+1 {
			tb.Fatalf("no progress after %d calls", calls)
		}
		end := min(got+chunk, n)
		k, err := s.ReadFrames(out[got*nch : end*nch])
		got += k
		if err != nil && !(errors.Is(err, io.EOF) && got == n) {
			tb.Fatalf("ReadFrames after %d frames: %v", got, err)
		}
	}
	return out
}

// column extracts channel c from interleaved frames.
func column(frames []float64, nch, c int) []float64 {
	out := make([]float64, len(frames)/nch)
	for i := range out {
		out[i] = frames[i*nch+c]
	}
	return out
}

// twiddles returns e^{−j2πi/n} for i = 0..n−1.
func twiddles(n int) []complex128 {
	w := make([]complex128, n)
	for i := range w {
		sn, cs := math.Sincos(-2 * math.Pi * float64(i) / float64(n))
		w[i] = complex(cs, sn)
	}
	return w
}

// dft returns the RMS phasor of bin k of x by the DFT definition,
// X_k = (√2/N)·Σ x[n]·e^{−j2πkn/N}, cosine-referenced at x[0].
func dft(x []float64, k int) complex128 { return dftW(x, k, twiddles(len(x))) }

func dftW(x []float64, k int, w []complex128) complex128 {
	var re, im float64
	n := len(x)
	for i, v := range x {
		t := w[k*i%n]
		re += v * real(t)
		im += v * imag(t)
	}
	return complex(re, im) * complex(math.Sqrt2/float64(n), 0)
}

// spectrum returns the RMS magnitudes of orders 0..50 of x, which spans
// `cycles` whole fundamental cycles (entry 0 is unused).
func spectrum(x []float64, cycles int) [51]float64 {
	var m [51]float64
	w := twiddles(len(x))
	for h := 1; h <= 50; h++ {
		m[h] = cmplx.Abs(dftW(x, h*cycles, w))
	}
	return m
}

// hsum is sqrt(Σ m[h]²) over orders 2..50.
func hsum(m [51]float64) float64 {
	var s float64
	for h := 2; h <= 50; h++ {
		s += m[h] * m[h]
	}
	return math.Sqrt(s)
}

// fortescue returns the positive, negative and zero sequence magnitudes of
// three phasors (a = e^{j120°}).
func fortescue(xa, xb, xc complex128) (pos, neg, zero float64) {
	a := cmplx.Rect(1, 2*math.Pi/3)
	a2 := a * a
	pos = cmplx.Abs((xa + a*xb + a2*xc) / 3)
	neg = cmplx.Abs((xa + a2*xb + a*xc) / 3)
	zero = cmplx.Abs((xa + xb + xc) / 3)
	return pos, neg, zero
}
