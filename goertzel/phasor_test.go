package goertzel

import (
	"math"
	"math/cmplx"
	"testing"
)

// dftRelTol bounds |Goertzel − direct DFT| relative to the signal level
// (√2·RMS of x, the phasor a pure tone of that power has): float64 Goertzel
// round-off grows with N/sin(ω); at N ≤ 4096 it stays orders below this.
const dftRelTol = 1e-9

// closedRelTol bounds the error against closed forms, relative to the tone's
// RMS: rounding of a few thousand float64 operations only.
const closedRelTol = 1e-9

func TestPhasorMatchesDirectDFT(t *testing.T) {
	t.Parallel()
	// src (all cases): the definition X = (√2/N)·Σ x[n]·e^{−j2πwn} (doc.go),
	// evaluated by the slow direct sum directDFT.
	lengths := []int{1, 2, 3, 7, 63, 64, 65, 127, 128, 129, 2039, 2047, 2048, 2049, 4096}
	rng := newRand(1)
	for _, n := range lengths {
		x := synth(n, []tone{
			{w: 50.0 / 10240, rms: 230, phase: 0.3},
			{w: 250.0 / 10240, rms: 9, phase: -2.1},
			{w: 0.1234567, rms: 1, phase: 1},
		}, 5, rng)
		scale := math.Sqrt2 * rmsOf(x)
		ws := []float64{
			12.37 / float64(n), // non-integer bin, w·N = 12.37
			3.0 / float64(n),   // integer bin
			50.0 / 10240,       // 50 Hz at 10.24 kHz
			49 * 50.1 / 10240,  // 49th order of 50.1 Hz
			0.25, 0.4999, 1e-4, 0.1234567,
		}
		for _, w := range ws {
			got, want := Phasor(x, w), directDFT(x, w)
			if !closeTo(got, want, dftRelTol*scale) {
				t.Errorf("N=%d w=%g: Phasor = %v, direct DFT = %v, |Δ| = %g > %g",
					n, w, got, want, cmplx.Abs(got-want), dftRelTol*scale)
			}
		}
	}
}

func TestPhasorEmpty(t *testing.T) {
	t.Parallel()
	// src: Phasor doc: an empty window has no phasor, 0 by definition.
	if got := Phasor(nil, 0.1); got != 0 {
		t.Fatalf("Phasor(nil) = %v, want 0", got)
	}
}

func TestPhasorClosedForms(t *testing.T) {
	t.Parallel()
	const (
		a     = 325.0 // peak, volts
		theta = 0.7   // radians
		nNon  = 1000  // window for the non-integer bin
		wNon  = 12.37 / nNon
	)
	// Non-integer bin, x = √2·R·cos(2πw0·n + θ) read at w = w0: splitting the
	// cosine into e^{±j(...)} gives X = R·e^{jθ} + (R/N)·e^{−jθ}·G with the
	// geometric sum G = Σ_{n<N} r^n = (1 − r^N)/(1 − r), r = e^{−j4πw0}.
	r := cmplx.Exp(complex(0, -4*math.Pi*wNon))
	g := (1 - cmplx.Pow(r, nNon)) / (1 - r)
	wantNon := cmplx.Rect(1, theta) + complex(1.0/nNon, 0)*cmplx.Exp(complex(0, -theta))*g

	tests := []struct {
		name string
		x    []float64
		w    float64
		want complex128
		src  string
	}{
		{
			name: "sine peak A, 10 whole cycles",
			x:    sineWave(2048, a, 10.0/2048, 0),
			w:    10.0 / 2048,
			want: complex(0, -a/math.Sqrt2),
			src:  "closed form: sine RMS = peak/√2; sin(φ) = cos(φ − 90°), so a cosine-referenced phasor reads −90°",
		},
		{
			name: "cosine R at θ, integer bin",
			x:    synth(256, []tone{{w: 7.0 / 256, rms: 1, phase: theta}}, 0, nil),
			w:    7.0 / 256,
			want: cmplx.Rect(1, theta),
			src:  "closed form: the phasor of √2·R·cos(ωn + θ) over whole cycles is R·e^{jθ} (doc.go definition)",
		},
		{
			name: "230 V at −30°, 50 Hz, fs 10240 Hz, 10 cycles",
			x:    synth(2048, []tone{{w: 50.0 / 10240, rms: 230, phase: -math.Pi / 6}}, 0, nil),
			w:    50.0 / 10240,
			want: cmplx.Rect(230, -math.Pi/6),
			src:  "closed form as above; N = 10·fs/f = 2048 holds 10 whole cycles",
		},
		{
			name: "non-integer bin, w·N = 12.37",
			x:    synth(nNon, []tone{{w: wNon, rms: 1, phase: theta}}, 0, nil),
			w:    wNon,
			want: wantNon,
			src:  "closed form: geometric series for the e^{−j(...)} image (derivation in the test)",
		},
		{
			name: "one sample",
			x:    []float64{3},
			w:    0.2,
			want: complex(3*math.Sqrt2, 0),
			src:  "closed form: N = 1 leaves (√2/1)·x[0]·e^0",
		},
	}
	for _, tc := range tests {
		t.Run(tc.name, func(t *testing.T) {
			t.Parallel()
			got := Phasor(tc.x, tc.w)
			tol := closedRelTol * cmplx.Abs(tc.want)
			if !closeTo(got, tc.want, tol) {
				t.Fatalf("got %v (|X| %.12g ∠ %.12g°), want %v (|X| %.12g ∠ %.12g°) [src: %s]",
					got, cmplx.Abs(got), deg(cmplx.Phase(got)),
					tc.want, cmplx.Abs(tc.want), deg(cmplx.Phase(tc.want)), tc.src)
			}
		})
	}
}

// sineWave is peak·sin(2π·w·n + phase).
func sineWave(n int, peak, w, phase float64) []float64 {
	x := make([]float64, n)
	for i := range x {
		x[i] = peak * math.Sin(2*math.Pi*w*float64(i)+phase)
	}
	return x
}

func deg(rad float64) float64 { return rad * 180 / math.Pi }

func TestCisTurns(t *testing.T) {
	t.Parallel()
	// src: closed form e^{j2πt} is periodic in t with period 1 and e^{jπ/2} = j.
	const tol = 1e-12 // a few ulps of a unit complex number
	for _, tc := range []struct {
		t    float64
		want complex128
	}{
		{0, 1}, {0.25, 1i}, {-0.25, -1i}, {0.5, -1}, {1000.25, 1i}, {-1e6 + 0.125, cmplx.Rect(1, math.Pi/4)},
	} {
		if got := cisTurns(tc.t); !closeTo(got, tc.want, tol) {
			t.Errorf("cisTurns(%g) = %v, want %v", tc.t, got, tc.want)
		}
	}
}
