package stream

import (
	"math"

	"github.com/gridloupe/gridloupe/goertzel"
	"github.com/gridloupe/gridloupe/metrics"
)

// maxMismatch is the largest relative difference between a window's whole
// samples N and the exact length L of its cycles at the measured frequency
// for which the window counts as synchronized: the leakage correction then
// converges (about 0.35 of the error is left per step for 50 orders at
// 0.3 %). A 0.5 Hz/s ramp's first window, cut for the frequency before the
// ramp, is 0.2 % off.
const maxMismatch = 3e-3

// exact turns each window's whole samples into the values of a window of
// exactly 10 (12) cycles of the frequency measured over it. The samples of
// the window are kept; when it ends, the reference's frequency is measured
// (tracker), refined once with the other components removed, every channel's
// Goertzel bank runs at exactly that frequency, and goertzel.Leakage removes
// what the fractional cycle count leaks between DC and the orders. The
// per-window sums (Σx, Σx², Σv·i) become those of the synchronized window
// by goertzel.MeanProduct. Not safe for concurrent use.
type exact struct {
	fs, cycles float64
	win        [][]float64 // the current window's samples, per channel
	banks      []*goertzel.Bank
	raw        [][]complex128 // phasors before the correction, per channel
	dc         []float64      // corrected DC, per channel
	leak       *goertzel.Leakage
	refX       []complex128 // the reference's phasors at the first estimate
}

func newExact(fs, cycles, minHz float64, nch int, orders []int) (*exact, error) {
	e := &exact{fs: fs, cycles: cycles, win: make([][]float64, nch), banks: make([]*goertzel.Bank, nch),
		raw: make([][]complex128, nch), dc: make([]float64, nch), refX: make([]complex128, len(orders))}
	maxN := int(math.Ceil(cycles*fs/minHz)) + 2
	for c := range nch {
		e.win[c] = make([]float64, maxN)
		b, err := goertzel.NewBank(orders)
		if err != nil {
			return nil, err
		}
		e.banks[c] = b
		e.raw[c] = make([]complex128, len(orders))
	}
	l, err := goertzel.NewLeakage(orders)
	if err != nil {
		return nil, err
	}
	e.leak = l
	return e, nil
}

// span returns the k samples of channel c's window buffer from offset at,
// for the caller to fill.
func (e *exact) span(c, at, k int) []float64 { return e.win[c][at : at+k] }

// refine returns the reference's frequency over its window of n samples,
// starting from the estimate f1 of the phase method on the uncorrected
// window: it fits the model at f1, removes every component but the
// fundamental from the sums over the whole window and its first half, and
// takes the frequency from their phase advance again (the method of
// tracker.measure, now without the bias the fractional cycle count gives).
func (e *exact) refine(ref, n int, f1 float64) float64 {
	x := e.win[ref][:n]
	w := f1 / e.fs
	b := e.banks[ref]
	b.Reset(w)
	b.Write(x)
	b.Phasors(e.refX)
	e.leak.Reset(w, n)
	var sum float64
	for _, v := range x {
		sum += v
	}
	dc, _ := e.leak.Solve(e.refX, sum/float64(n))
	full, half := e.leak.Fundamental(x, e.refX, dc)
	return halfPhase(full, half, f1, e.fs, n)
}

// analyse fills in's phasors and sums for the window of n samples at
// frequency f. It corrects the leakage when the window is within
// maxMismatch of f's whole cycles (correct), and reports whether every
// usable channel's correction converged.
func (e *exact) analyse(in *metrics.Input, products []metrics.Pair, n int, f float64, correct bool) (ok bool) {
	w := f / e.fs
	nf := float64(n)
	for c := range in.Ch {
		b := e.banks[c]
		b.Reset(w)
		b.Write(e.win[c][:n])
		b.Phasors(in.Ch[c].Phasors)
	}
	if !correct {
		return false
	}
	e.leak.Reset(w, n)
	ok = true
	for c := range in.Ch {
		ch := &in.Ch[c]
		copy(e.raw[c], ch.Phasors)
		if ch.Bad || ch.N != n {
			continue
		}
		dc, conv := e.leak.Solve(ch.Phasors, ch.Sum/nf)
		ok = ok && conv
		e.dc[c] = dc
	}
	for i, pr := range products {
		a, b := &in.Ch[pr.V], &in.Ch[pr.I]
		if a.Bad || b.Bad || a.N != n || b.N != n {
			continue
		}
		in.SumVI[i] = nf * goertzel.MeanProduct(in.SumVI[i]/nf, e.dc[pr.V], e.dc[pr.I], b.Sum/nf, a.Phasors, b.Phasors, e.raw[pr.I])
	}
	for c := range in.Ch {
		ch := &in.Ch[c]
		if ch.Bad || ch.N != n {
			continue
		}
		ms := goertzel.MeanProduct(ch.SumSq/nf, e.dc[c], e.dc[c], ch.Sum/nf, ch.Phasors, ch.Phasors, e.raw[c])
		ch.SumSq = nf * max(0, ms)
		ch.Sum = nf * e.dc[c]
	}
	return ok
}

// halfPhase returns the frequency from the fundamental's DFT sums over a
// window of n samples (full) and over its first n/2 samples (half), taken at
// f: the second half's sum advances in phase over the first by
// (ω − ω̂)·n/2, so f_true = f + Δφ·fs/(π·n).
func halfPhase(full, half complex128, f, fs float64, n int) float64 {
	sb := full - half
	return f + phaseOf(sb*complex(real(half), -imag(half)))*fs/(math.Pi*float64(n))
}

func phaseOf(z complex128) float64 { return math.Atan2(imag(z), real(z)) }
