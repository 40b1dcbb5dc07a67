package goertzel

import (
	"fmt"
	"math"
	"math/cmplx"
	"strconv"
	"testing"

	"gonum.org/v1/gonum/dsp/fourier"
)

// One 10-cycle window of one channel: fs = 10240 Hz, f = 50 Hz, N = 2048.
const (
	benchFs = 10240.0
	benchF  = 50.0
	benchN  = 2048
	benchW  = benchF / benchFs
)

// reportPerSample adds ns per sample of the window to the benchmark output.
func reportPerSample(b *testing.B, n int) {
	b.ReportMetric(float64(b.Elapsed().Nanoseconds())/float64(b.N)/float64(n), "ns/sample")
}

// checkFund fails the benchmark if the fundamental is not the 45.8 A that
// drive50 puts in (closed form; same as the tests' definition).
func checkFund(b *testing.B, x complex128) {
	b.Helper()
	const tol = 0.05 // amps: the noise of drive50 moves the bin slightly
	if math.Abs(cmplx.Abs(x)-45.8) > tol {
		b.Fatalf("fundamental %g A, want 45.8", cmplx.Abs(x))
	}
}

func BenchmarkWindow(b *testing.B) {
	x := drive50(benchN, benchW, 1)
	sets := []struct {
		name   string
		orders []int
	}{
		{"orders1", []int{1}},
		{"orders17", sixPulse},
		{"orders50", seq(1, 50)},
	}
	for _, set := range sets {
		dst := make([]complex128, len(set.orders))

		for _, path := range []struct {
			name string
			bank func(testing.TB, []int) *Bank
		}{
			{"bank", mustBank}, // the vector kernels where this build and CPU have them
			{"bankgo", goBank}, // the pure-Go loops, as armv7 and -tags purego run them
		} {
			b.Run(set.name+"/"+path.name, func(b *testing.B) {
				bank := path.bank(b, set.orders)
				b.ReportAllocs()
				for b.Loop() {
					bank.Reset(benchW)
					bank.Write(x)
					bank.Phasors(dst)
				}
				reportPerSample(b, benchN)
				checkFund(b, dst[0])
			})
		}

		b.Run(set.name+"/naive", func(b *testing.B) {
			// One order after another: the recurrences cannot overlap.
			b.ReportAllocs()
			for b.Loop() {
				for i, h := range set.orders {
					dst[i] = Phasor(x, float64(h)*benchW)
				}
			}
			reportPerSample(b, benchN)
			checkFund(b, dst[0])
		})

		b.Run(set.name+"/fft2048", func(b *testing.B) {
			// Real FFT of the window, then bins 10·h as RMS phasors. Valid
			// only because N holds exactly 10 cycles.
			fft := fourier.NewFFT(benchN)
			coef := make([]complex128, benchN/2+1)
			b.ReportAllocs()
			for b.Loop() {
				fft.Coefficients(coef, x)
				for i, h := range set.orders {
					dst[i] = fftPhasor(coef[10*h], benchN)
				}
			}
			reportPerSample(b, benchN)
			checkFund(b, dst[0])
		})
	}
}

// BenchmarkFFTPrime shows what a tracked window of prime length costs an FFT
// (N = 2039: 10 cycles of 50.22 Hz at 10.24 kHz) next to the bank on the same
// samples, whose cost does not depend on N's factors.
func BenchmarkFFTPrime(b *testing.B) {
	const n = 2039
	w := 10.0 / n
	x := drive50(n, w, 2)
	orders := seq(1, 50)
	dst := make([]complex128, len(orders))
	b.Run("fft2039", func(b *testing.B) {
		fft := fourier.NewFFT(n)
		coef := make([]complex128, n/2+1)
		b.ReportAllocs()
		for b.Loop() {
			fft.Coefficients(coef, x)
			for i, h := range orders {
				dst[i] = fftPhasor(coef[10*h], n)
			}
		}
		reportPerSample(b, n)
		checkFund(b, dst[0])
	})
	b.Run("bank2039", func(b *testing.B) {
		bank := mustBank(b, orders)
		b.ReportAllocs()
		for b.Loop() {
			bank.Reset(w)
			bank.Write(x)
			bank.Phasors(dst)
		}
		reportPerSample(b, n)
		checkFund(b, dst[0])
	})
}

// BenchmarkBankWrite feeds a 50-order bank in blocks of several sizes, as a
// source delivers them.
func BenchmarkBankWrite(b *testing.B) {
	x := drive50(benchN, benchW, 3)
	for _, blk := range []int{16, 128, 2048} {
		b.Run("block"+strconv.Itoa(blk), func(b *testing.B) {
			bank := mustBank(b, seq(1, 50))
			dst := make([]complex128, bank.Len())
			b.SetBytes(8 * benchN) // 8 bytes per sample: MB/s converts to samples/s
			b.ReportAllocs()
			for b.Loop() {
				bank.Reset(benchW)
				for i := 0; i < benchN; i += blk {
					bank.Write(x[i : i+blk])
				}
			}
			bank.Phasors(dst)
			reportPerSample(b, benchN)
			checkFund(b, dst[0])
		})
	}
}

// BenchmarkSlidingPush is the per-sample cost of a one-cycle Urms(1/2)
// window with the fundamental bin (128 samples at 6.4 kHz).
func BenchmarkSlidingPush(b *testing.B) {
	const n = 128
	s := mustSliding(b, n, []int{1})
	x := drive50(4*n, 1.0/n, 4)
	b.ReportAllocs()
	for b.Loop() {
		s.Write(x)
	}
	reportPerSample(b, len(x))
	checkFund(b, s.Phasor(0))
}

// BenchmarkLeakage: the correction of one channel's window at 50.02 Hz
// (2047 samples for 2047.18) for 1, 17 and 50 orders, beside the bank that
// produced the phasors: Reset (the kernel and the matrix, once per window
// for all channels) and Solve (once per channel) apart.
func BenchmarkLeakage(b *testing.B) {
	const w = 50.02 / 10240
	for _, orders := range [][]int{{1}, {1, 5, 7, 11, 13, 17, 19, 23, 25, 29, 31, 35, 37, 41, 43, 47, 49}, seq(1, 50)} {
		bk := mustBank(b, orders)
		x := drive50(2047, w, 1)
		raw := make([]complex128, len(orders))
		ph := make([]complex128, len(orders))
		bk.Reset(w)
		bk.Write(x)
		bk.Phasors(raw)
		l, err := NewLeakage(orders)
		if err != nil {
			b.Fatal(err)
		}
		b.Run(fmt.Sprintf("Reset/%dorders", len(orders)), func(b *testing.B) {
			b.ReportAllocs()
			for b.Loop() {
				l.Reset(w, len(x))
			}
		})
		b.Run(fmt.Sprintf("Solve/%dorders", len(orders)), func(b *testing.B) {
			l.Reset(w, len(x))
			b.ReportAllocs()
			var ok bool
			for b.Loop() {
				copy(ph, raw)
				_, ok = l.Solve(ph, 0)
			}
			if !ok {
				b.Fatal("not converged")
			}
		})
	}
}
