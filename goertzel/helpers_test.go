package goertzel

import (
	"math"
	"math/cmplx"
	"math/rand/v2"
	"testing"
)

// directDFT is the slow, obvious reference: X = (√2/N)·Σ x[n]·e^{−j2πwn}, the
// definition of the RMS phasor in doc.go, one complex exponential per sample
// (angle reduced to whole turns first so it stays exact for large w·n).
func directDFT(x []float64, w float64) complex128 {
	if len(x) == 0 {
		return 0
	}
	var sum complex128
	for n, v := range x {
		t := w * float64(n)
		s, c := math.Sincos(-2 * math.Pi * (t - math.Round(t)))
		sum += complex(v*c, v*s)
	}
	return sum * complex(math.Sqrt2/float64(len(x)), 0)
}

// tone describes √2·rms·cos(2π·w·n + phase).
type tone struct {
	w, rms, phase float64
}

// synth returns the sum of the tones over n samples, plus uniform noise of
// the given peak from rng (nil rng: no noise).
func synth(n int, tones []tone, noise float64, rng *rand.Rand) []float64 {
	x := make([]float64, n)
	for i := range x {
		var v float64
		for _, t := range tones {
			a := t.w * float64(i)
			v += math.Sqrt2 * t.rms * math.Cos(2*math.Pi*(a-math.Round(a))+t.phase)
		}
		if rng != nil {
			v += noise * (2*rng.Float64() - 1)
		}
		x[i] = v
	}
	return x
}

// newRand returns a PCG source with a fixed seed, so every run sees the same
// "random" input.
func newRand(seed uint64) *rand.Rand {
	return rand.New(rand.NewPCG(seed, 0x9e3779b97f4a7c15))
}

// rmsOf is the root mean square of x (0 for an empty x).
func rmsOf(x []float64) float64 {
	if len(x) == 0 {
		return 0
	}
	var ss float64
	for _, v := range x {
		ss += v * v
	}
	return math.Sqrt(ss / float64(len(x)))
}

// closeTo reports whether |got − want| ≤ tol.
func closeTo(got, want complex128, tol float64) bool {
	return cmplx.Abs(got-want) <= tol
}

// angleDiff is the wrapped difference a − b in (−π, π].
func angleDiff(a, b float64) float64 {
	d := math.Remainder(a-b, 2*math.Pi)
	return d
}

// mustBank is NewBank that fails the test on error.
func mustBank(tb testing.TB, orders []int) *Bank {
	tb.Helper()
	b, err := NewBank(orders)
	if err != nil {
		tb.Fatalf("NewBank(%v): %v", orders, err)
	}
	return b
}

// mustSliding is NewSliding that fails the test on error.
func mustSliding(tb testing.TB, n int, bins []int) *Sliding {
	tb.Helper()
	s, err := NewSliding(n, bins)
	if err != nil {
		tb.Fatalf("NewSliding(%d, %v): %v", n, bins, err)
	}
	return s
}

// seq returns the orders lo..hi.
func seq(lo, hi int) []int {
	o := make([]int, 0, hi-lo+1)
	for h := lo; h <= hi; h++ {
		o = append(o, h)
	}
	return o
}
