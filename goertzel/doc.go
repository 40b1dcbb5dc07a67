//go:generate go run asmgen.go

// Package goertzel turns blocks of samples into phasors: single-frequency
// Goertzel filters, streaming harmonic banks and a sliding DFT.
//
// Every phasor is a cosine-referenced RMS phasor. For
//
//	x[n] = √2·|X|·cos(2π·w·n + θ),  n = 0..N−1,
//
// with w = f/fs in cycles per sample, the phasor is X = |X|·e^{jθ}, that is
// X = (√2/N)·Σ x[n]·e^{−j2πwn}, exact when the window holds a whole number of
// cycles of w. Its angle is measured at the window's first sample. A sine of
// peak A therefore reads |X| = A/√2 at −90°.
//
// Which form the pipeline uses, and why:
//
//   - The synchronized 10/12-cycle windows (IEC 61000-4-7 block structure)
//     use [Bank], one per channel, reset at the start of every window with the
//     tracked fundamental w = f/fs. A block Goertzel restarted each window has
//     no sliding recursion, so the marginal stability of the sliding DFT never
//     arises, and its order-h bin sits at the exact frequency h·w even when
//     the window is not an integer number of samples per cycle (the closing
//     step restores the phase for a non-integer bin, after Sysel & Rajmic,
//     EURASIP J. Adv. Signal Process. 2012:56). Its cost does not depend on the
//     factors of N, unlike an FFT, and it streams: any block size, with a
//     result that may be read mid-window.
//   - [Sliding] gives a value at every sample for integer bins of a fixed
//     window, at constant cost per sample. It is meant for event detection:
//     with a one-cycle window its [Sliding.SumSquares] yields the one-cycle
//     RMS refreshed every half cycle, Urms(1/2) of IEC 61000-4-30, used for
//     dips, swells and interruptions. It is a modulated sliding DFT: the
//     twiddle moves out of the recursion into a table, leaving a feedback
//     coefficient of exactly 1 that rounding cannot push off the unit circle,
//     and its running sums are re-summed exactly from its ring buffer at a
//     fixed period, so rounding cannot accumulate however long it runs. The
//     synchronized windows do not use it: their length follows the tracked
//     frequency, and a sliding form would need integer bins of a fixed N.
//
// The package is pure computation: it does no I/O, knows nothing about
// channels or configuration, and imports only the standard library and, on
// amd64, golang.org/x/sys/cpu to detect AVX2 and FMA (gonum is used in tests
// only, as an independent reference). Bank's per-sample loop has vector
// kernels in assembly for amd64 and arm64 (bank_amd64.s, bank_arm64.s,
// written by asmgen.go) beside the pure-Go loops, which every other
// architecture, an amd64 CPU without AVX2 and FMA, and the purego build tag
// use.
package goertzel
