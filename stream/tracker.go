package stream

import (
	"math"
	"math/cmplx"
)

// Tracker limits, documented in the package and README.
const (
	// trackRange bounds the tracked frequency to ±30 % of nominal, wider
	// than the IEC 61000-4-30 range of 42.5–57.5 Hz / 51–69 Hz.
	trackRange = 0.30
	// refineRange is the largest relative error the half-window phase method
	// resolves without ambiguity (it wraps at 10 %); beyond 4 % the
	// zero-crossing estimate is used instead.
	refineRange = 0.04
	// maxStepHz bounds the per-window frequency step used for prediction
	// (2 Hz/s at 200 ms windows), so a glitch cannot throw the cut far off.
	maxStepHz = 0.4
	// trustTol is the relative cut error below which a window's frequency
	// is trusted for prediction (0.5 %: up to 2.5 Hz/s at 50 Hz); a window
	// cut much further off (acquisition, a step, the signal's return) is
	// measured, but not extrapolated from.
	trustTol = 5e-3
)

// tracker follows the fundamental of the reference channel and chooses the
// frequency each window is cut for. It owns the zero-crossing counter that
// also gives the 10 s frequency value. Not safe for concurrent use.
//
// Acquisition does not depend on the cut: whether a signal is present is
// decided on the low-passed reference's own level (its RMS over the window
// divided by the filter's gain at the zero-crossing frequency), not on the
// fundamental bin of a window cut for the wrong frequency, where a tone one
// bin away sits in a null. With a signal present, a cut far from the
// zero-crossing frequency is corrected from it.
type tracker struct {
	fs, nomHz float64
	lockV     float64 // fundamental RMS below which there is no lock
	fUsed     float64 // frequency the current window was cut for
	fPrev     float64 // measured frequency of the previous window, NaN if none
	prevOK    bool    // the previous window's frequency is trusted for prediction
	locked    bool    // the last window finished was synchronized
	zc        crossings
}

func newTracker(fs, nomHz, lockV float64) tracker {
	// hysteresis: a tenth of the lock threshold's peak keeps noise from
	// re-arming the detector; a locked signal is far larger.
	return tracker{fs: fs, nomHz: nomHz, lockV: lockV, fUsed: nomHz, fPrev: math.NaN(),
		zc: newCrossings(fs, nomHz, 0.1*lockV*math.Sqrt2)}
}

// CycleSamples returns the length of one cycle of the frequency the current
// window is cut for, in samples (fractional).
func (t *tracker) CycleSamples() float64 { return t.fs / t.fUsed }

// Locked reports whether the last finished window was synchronized.
func (t *tracker) Locked() bool { return t.locked }

// measure takes the reference channel's fundamental over the window just
// ended (x1, RMS phasor over n samples at the cut frequency) and over its
// first half (xh, over n/2 samples) and estimates the window's frequency.
// fine reports that the estimate comes from the fundamental's phase (and can
// be refined); otherwise it comes from the zero crossings (NaN when there is
// no signal, and the tracker has forgotten the frequency). Call commit next.
//
// Within ±4 % of the cut frequency the phase method refines it: the
// fundamental's DFT sum over the first half of the window (SA) and over the
// second half (SB = S − SA) advance in phase by (ω − ω̂)·N/2 radians, so
// Δf = Δφ·fs/(π·N). On a window holding a whole number of cycles both halves
// hold five (six) whole cycles, so harmonics cancel and only noise remains.
// Beyond that range, and when the fundamental bin is too small to carry a
// phase, the zero-crossing count of the low-passed reference gives the value
// for the next cut.
func (t *tracker) measure(x1, xh complex128, n int, bad bool) (f float64, fine bool) {
	zcF, zcN, level := t.zc.windowFreq()
	a1 := cmplx.Abs(x1)
	if bad || !(level >= t.lockV || a1 >= t.lockV) {
		t.lost()
		return math.NaN(), false
	}
	nn := float64(n)
	m := float64(n / 2)
	sa := xh * complex(m/math.Sqrt2, 0)
	sb := x1*complex(nn/math.Sqrt2, 0) - sa
	dphi := cmplx.Phase(sb * cmplx.Conj(sa))
	fRef := t.fUsed + dphi*t.fs/(math.Pi*nn)
	zcOK := zcN >= 3 && !math.IsNaN(zcF)
	switch {
	case zcOK && (math.Abs(zcF-t.fUsed) > refineRange*t.fUsed || !(a1 >= t.lockV)):
		// the cut is too far off for the phase method (or its bin holds no
		// fundamental to take a phase from): take the crossings' value
		return zcF, false
	case !(a1 >= t.lockV):
		// a signal, but neither a usable bin nor enough crossings yet
		t.lost()
		return math.NaN(), false
	}
	return fRef, true
}

// commit takes the window's final frequency f (fine: from the phase method)
// and whether the window was synchronized, and sets the next cut.
func (t *tracker) commit(f float64, fine, lock bool) {
	if math.IsNaN(f) {
		return // lost() has run
	}
	trusted := fine && math.Abs(f-t.fUsed) <= trustTol*t.fUsed
	next := f
	if trusted && t.prevOK && !math.IsNaN(t.fPrev) {
		// both windows measured near their cut: extrapolate the trend
		step := max(-maxStepHz, min(maxStepHz, f-t.fPrev))
		next = f + step
	}
	t.prevOK = trusted
	lo, hi := t.nomHz*(1-trackRange), t.nomHz*(1+trackRange)
	t.fPrev = f
	t.fUsed = max(lo, min(hi, next))
	t.locked = lock
}

// lost forgets the frequency after a loss of signal: the next window is cut
// for nominal.
func (t *tracker) lost() {
	t.prevOK = false
	t.fPrev = math.NaN()
	t.fUsed = t.nomHz
	t.locked = false
	t.zc.resetCounts()
}

// CycleSamples returns the length of one cycle of the tracked frequency in
// samples (fractional): the frequency the next window is cut for, nominal
// while there is no lock. For per-cycle work on the per-sample path such as
// Urms(1/2).
func (p *Pipeline) CycleSamples() float64 { return p.trk.CycleSamples() }

// Locked reports whether the last window finished was synchronized (no
// no_lock flag).
func (p *Pipeline) Locked() bool { return p.trk.Locked() }
