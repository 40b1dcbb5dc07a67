package goertzel

import "math"

// rmsScale turns a DFT sum Σ x[n]·e^{−jωn} of a real sinusoid spanning whole
// cycles into its RMS phasor: |Σ| = A·N/2 for peak A, so RMS = √2·|Σ|/N.
const rmsScale = math.Sqrt2

// cisTurns returns e^{j2π·t} for t in turns (cycles). The whole turns are
// removed before the multiplication by 2π so the angle stays accurate for
// large t (t = h·w·N reaches a few hundred in a 10-cycle window).
func cisTurns(t float64) complex128 {
	s, c := math.Sincos(2 * math.Pi * (t - math.Round(t)))
	return complex(c, s)
}

// Phasor returns the RMS phasor of x at the normalized frequency w (cycles
// per sample, f/fs), with its angle at x[0]: X = (√2/N)·Σ x[n]·e^{−j2πwn}.
// w need not put an integer number of cycles in the window (a non-integer
// bin); the sum is then still evaluated at exactly w, but a window that does
// not hold whole cycles of every component leaks between them. An empty x
// gives 0. For w = 0 the result is √2 times the mean, by the same formula.
func Phasor(x []float64, w float64) complex128 {
	n := len(x)
	if n == 0 {
		return 0
	}
	sin1, cos1 := math.Sincos(2 * math.Pi * (w - math.Round(w)))
	coef := 2 * cos1
	var s1, s2 float64 // s[n−1], s[n−2]
	for _, v := range x {
		s1, s2 = v+coef*s1-s2, s1
	}
	return closing(s1, s2, cos1, sin1, w*float64(n), float64(n))
}

// closing turns the Goertzel state after N samples into the RMS phasor.
//
// Derivation. The recurrence s[n] = x[n] + 2cos(ω)·s[n−1] − s[n−2] is the
// filter 1/((1 − e^{jω}z⁻¹)(1 − e^{−jω}z⁻¹)). Following it with the FIR
// 1 − e^{−jω}z⁻¹ cancels one pole and leaves y[n] = s[n] − e^{−jω}·s[n−1],
// the one-pole filter whose output is y[n] = Σ_{m≤n} x[m]·e^{jω(n−m)}.
// Evaluate it one step past the data, at n = N with x[N] = 0: there
// s[N] = 2cos(ω)·s[N−1] − s[N−2], so
//
//	y[N] = (2cos ω − e^{−jω})·s[N−1] − s[N−2] = e^{jω}·s[N−1] − s[N−2]
//	y[N] = e^{jωN}·Σ_{m=0}^{N−1} x[m]·e^{−jωm}.
//
// Hence the DFT sum at ω is e^{−jωN}·(e^{jω}·s[N−1] − s[N−2]). For an integer
// bin (ωN a multiple of 2π) the factor e^{−jωN} is 1 and this is the textbook
// complex Goertzel output; for a non-integer bin it restores the phase
// (Sysel & Rajmic, EURASIP J. Adv. Signal Process. 2012:56). Scaling by √2/N
// gives the RMS phasor. turns = w·N is ωN/2π.
func closing(s1, s2, cos1, sin1, turns, n float64) complex128 {
	y := complex(cos1*s1-s2, sin1*s1) // e^{jω}·s1 − s2
	return y * cisTurns(-turns) * complex(rmsScale/n, 0)
}
