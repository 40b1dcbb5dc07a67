package goertzel

import (
	"math"
	"math/cmplx"
	"testing"

	"gonum.org/v1/gonum/dsp/fourier"
)

// fftAbsTol bounds |Goertzel − FFT| relative to the largest phasor: both are
// float64 evaluations of the same sum; their round-off is far below this.
const fftAbsTol = 1e-9

// fftPhaseTol bounds the phase difference in radians for bins at least
// fftPhaseFloor of the largest (smaller bins' angles are rounding noise).
const (
	fftPhaseTol   = 1e-9
	fftPhaseFloor = 1e-3
)

// fftPhasor converts gonum's unnormalized coefficient c_k = Σ x[n]·e^{−j2πkn/N}
// into the RMS phasor X = √2·c_k/N (valid for 0 < k < N/2). The conversion
// is verified by TestGonumConvention.
func fftPhasor(c complex128, n int) complex128 {
	return c * complex(math.Sqrt2/float64(n), 0)
}

func TestGonumConvention(t *testing.T) {
	t.Parallel()
	// src: DFT of a sinusoid, closed form: "for a real sinusoid of peak A spanning an integer
	// number of cycles, |X| = A·N/2" [confirmed: numeric check], and the
	// e^{−j} sign convention makes the angle of cos(ωn + θ) equal θ.
	const (
		n     = 1000
		k     = 17
		peak  = 2.5
		theta = -1.1
		tol   = 1e-9 // relative: float64 FFT round-off on 1000 points
	)
	x := make([]float64, n)
	for i := range x {
		x[i] = peak * math.Cos(2*math.Pi*float64(k*i%n)/n+theta)
	}
	c := fourier.NewFFT(n).Coefficients(nil, x)
	want := cmplx.Rect(peak*n/2, theta)
	if !closeTo(c[k], want, tol*cmplx.Abs(want)) {
		t.Fatalf("gonum c_%d = %v, want (A·N/2)·e^{jθ} = %v", k, c[k], want)
	}
	// And so √2·c_k/N is the RMS phasor (peak/√2)·e^{jθ}.
	if got, w := fftPhasor(c[k], n), cmplx.Rect(peak/math.Sqrt2, theta); !closeTo(got, w, tol*cmplx.Abs(w)) {
		t.Fatalf("√2·c_k/N = %v, want %v", got, w)
	}
}

func TestAgainstGonumFFT(t *testing.T) {
	t.Parallel()
	rng := newRand(42)
	var worstAbs, worstPhase float64
	defer func() { t.Logf("worst |Δ|/max|X| = %.3g, worst phase = %.3g rad", worstAbs, worstPhase) }()
	for _, n := range []int{64, 255, 1000, 2039, 2048} {
		// Random multi-tone signal on integer bins, random amplitudes and
		// phases, plus noise: every bin has a meaningful value.
		var tones []tone
		for range 12 {
			k := 1 + rng.IntN(n/2-1)
			tones = append(tones, tone{w: float64(k) / float64(n), rms: 0.01 + rng.Float64(), phase: 2 * math.Pi * rng.Float64()})
		}
		x := synth(n, tones, 0.05, rng)

		coef := fourier.NewFFT(n).Coefficients(nil, x)
		ref := make([]complex128, (n+1)/2)
		var largest float64
		for k := 1; k < (n+1)/2; k++ { // 0 < k < N/2
			ref[k] = fftPhasor(coef[k], n)
			largest = max(largest, cmplx.Abs(ref[k]))
		}

		// Bank over orders 1..m of w = 1/N is bins 1..m; Phasor covers the rest.
		m := min(MaxOrder, (n+1)/2-1)
		fromBank := bankPhasors(t, seq(1, m), 1/float64(n), x)
		for k := 1; k < (n+1)/2; k++ {
			var got complex128
			if k <= m {
				got = fromBank[k-1]
			} else {
				got = Phasor(x, float64(k)/float64(n))
			}
			// src: gonum.org/v1/gonum/dsp/fourier FFT.Coefficients, converted
			// by fftPhasor (verified in TestGonumConvention).
			want := ref[k]
			worstAbs = max(worstAbs, cmplx.Abs(got-want)/largest)
			if !closeTo(got, want, fftAbsTol*largest) {
				t.Errorf("N=%d k=%d: Goertzel %v, FFT %v, |Δ| = %g", n, k, got, want, cmplx.Abs(got-want))
			}
			if cmplx.Abs(want) >= fftPhaseFloor*largest {
				d := math.Abs(angleDiff(cmplx.Phase(got), cmplx.Phase(want)))
				worstPhase = max(worstPhase, d)
				if d > fftPhaseTol {
					t.Errorf("N=%d k=%d: phase differs by %g rad", n, k, d)
				}
			}
		}
	}
}
