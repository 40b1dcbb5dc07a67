package stream

import (
	"math"
	"math/cmplx"
)

// biquad is one second-order section in transposed direct form II.
type biquad struct {
	b0, b1, b2, a1, a2 float64
	z1, z2             float64
}

// lowpass returns a Butterworth second-order low-pass section (bilinear
// transform with pre-warping; closed form, e.g. the RBJ audio-EQ cookbook
// with Q = 1/√2).
func lowpass(fc, fs float64) biquad {
	k := math.Tan(math.Pi * fc / fs)
	q := 1 / math.Sqrt2
	norm := 1 / (1 + k/q + k*k)
	b0 := k * k * norm
	return biquad{b0: b0, b1: 2 * b0, b2: b0, a1: 2 * (k*k - 1) * norm, a2: (1 - k/q + k*k) * norm}
}

// response returns the section's frequency response at ω radians per sample.
func (f *biquad) response(w float64) complex128 {
	z1 := cmplx.Rect(1, -w)
	z2 := z1 * z1
	return (complex(f.b0, 0) + complex(f.b1, 0)*z1 + complex(f.b2, 0)*z2) /
		(1 + complex(f.a1, 0)*z1 + complex(f.a2, 0)*z2)
}

func (f *biquad) step(x float64) float64 {
	y := f.b0*x + f.z1
	f.z1 = f.b1*x - f.a1*y + f.z2
	f.z2 = f.b2*x - f.a2*y
	return y
}

// crossings detects positive-going zero crossings of the reference channel
// after a fourth-order low-pass (two Butterworth sections) that removes
// harmonics and noise, with hysteresis against chatter and linear
// interpolation between samples. It serves two purposes: coarse frequency
// acquisition per window, and the 10 s frequency value of IEC 61000-4-30
// (whole cycles counted in the 10 s clock interval divided by their total
// duration; cycles straddling the interval edges are discarded). Each
// crossing is moved back by the filter's phase delay at the frequency of the
// cycle it ends, so the positions are those of the unfiltered fundamental:
// on a steady signal the delay cancels in every period, and on a ramp or
// after a step it would otherwise move the 10 s interval's edges (the delay
// changes with frequency). Positions are kept as a uint64 sample index plus
// a fraction. It also measures the low-passed signal's level over each
// window, which does not depend on how the window was cut.
type crossings struct {
	f1, f2  biquad
	hyst    float64 // the filtered signal must fall below −hyst to arm
	armed   bool
	prev    float64
	settle  uint64 // samples left before the filter output is trusted
	idx     uint64 // index of the next sample
	fs      float64
	win     span   // crossings in the current window
	ten     cycles // whole cycles in the current 10 s interval
	lastI   uint64 // the previous crossing (delay removed), for the cycle it ends
	lastF   float64
	rawI    uint64 // the previous crossing as filtered
	rawF    float64
	hasLast bool
	minP    float64 // shortest and longest plausible period, samples
	maxP    float64
	fEst    float64 // frequency of the last plausible cycle, Hz (for the delay)
	nomHz   float64
	ySum    float64 // Σy and Σy² of the filtered signal over the window
	ySq     float64
	yN      int
	nextTen uint64
	closed  float64 // value of the last closed 10 s interval, NaN if none
	hasTen  bool
}

// cycles sums whole cycles and their durations (in samples). A gap in the
// signal (an interruption, a stretch below the hysteresis) leaves no cycle
// behind, so it does not count as time: the value is the whole cycles
// counted divided by their total duration, as IEC 61000-4-30 defines it.
type cycles struct {
	n   int
	dur float64
}

func (c *cycles) freq(fs float64) float64 {
	if c.n == 0 || c.dur <= 0 {
		return math.NaN()
	}
	return float64(c.n) * fs / c.dur
}

// span counts crossings between a first and a last one.
type span struct {
	n      int
	firstI uint64
	firstF float64
	lastI  uint64
	lastF  float64
}

func (s *span) add(i uint64, f float64) {
	if s.n == 0 {
		s.firstI, s.firstF = i, f
	}
	s.lastI, s.lastF = i, f
	s.n++
}

// freq returns whole cycles divided by their duration, NaN below two crossings.
func (s *span) freq(fs float64) float64 {
	if s.n < 2 {
		return math.NaN()
	}
	d := float64(s.lastI-s.firstI) + (s.lastF - s.firstF)
	if d <= 0 {
		return math.NaN()
	}
	return float64(s.n-1) * fs / d
}

func newCrossings(fs, nominalHz, hyst float64) crossings {
	fc := 1.5 * nominalHz // passes 42.5–69 Hz with little attenuation, takes 5th and up down by ~20 dB or more
	return crossings{f1: lowpass(fc, fs), f2: lowpass(fc, fs), hyst: hyst, fs: fs,
		settle: uint64(fs / nominalHz * 3), closed: math.NaN(), fEst: nominalHz, nomHz: nominalHz,
		minP: fs / (nominalHz * (1 + trackRange)), maxP: fs / (nominalHz * (1 - trackRange))}
}

// setTen sets the sample index at which the current 10 s interval ends.
func (c *crossings) setTen(end uint64) { c.nextTen = end }

// write filters x (calibrated reference samples starting at index c.idx)
// and records crossings. No allocations.
func (c *crossings) write(x []float64) {
	for _, v := range x {
		if v-v != 0 { // NaN or Inf: feed zero so the filter state stays finite
			v = 0
		}
		y := c.f2.step(c.f1.step(v))
		i := c.idx
		c.idx++
		if c.settle > 0 {
			c.settle--
			c.prev = y
			continue
		}
		c.ySum += y
		c.ySq += y * y
		c.yN++
		if y < -c.hyst {
			c.armed = true
		} else if c.armed && y >= 0 && c.prev < 0 {
			c.armed = false
			// crossing between sample i−1 and i
			frac := -c.prev / (y - c.prev)
			pi, pf := i-1, frac
			if i == 0 {
				pi, pf = 0, 0
			}
			if c.hasLast {
				// the frequency of the cycle ending here, for its delay
				d := float64(pi-c.rawI) + (pf - c.rawF)
				if d >= c.minP && d <= c.maxP {
					c.fEst = c.fs / d
				}
			}
			c.rawI, c.rawF = pi, pf
			pi, pf = back(pi, pf, c.delay(c.fEst))
			if c.nextTen > 0 && pi >= c.nextTen {
				c.closeTen() // the cycle ending here straddles the edge: discarded
			}
			c.win.add(pi, pf)
			if c.hasLast {
				if d := float64(pi-c.lastI) + (pf - c.lastF); d >= c.minP && d <= c.maxP {
					c.ten.n++
					c.ten.dur += d
				}
			}
			c.lastI, c.lastF, c.hasLast = pi, pf, true
		}
		c.prev = y
	}
}

// closeTen ends the current 10 s interval: at the first crossing past its
// end, or when the window holding the end finishes, whichever comes first.
//
// Cycles straddling the interval's edges are discarded (IEC 61000-4-30).
func (c *crossings) closeTen() {
	c.closed = c.ten.freq(c.fs)
	c.hasTen = true
	c.ten = cycles{}
	c.hasLast = false
	c.nextTen = 0
}

// back returns position (i, f) moved back by d ≥ 0 samples, not before 0.
func back(i uint64, f, d float64) (uint64, float64) {
	r := f - d
	w := math.Floor(r)
	if w < 0 && uint64(-w) > i {
		return 0, 0
	}
	if w < 0 {
		i -= uint64(-w)
	} else {
		i += uint64(w)
	}
	return i, r - w
}

// delay returns the low-pass filter's phase delay at f, in samples: the time
// by which a crossing of the filtered signal follows the crossing of the
// input's fundamental (−arg H(f) / ω for the two identical sections).
func (c *crossings) delay(f float64) float64 {
	w := 2 * math.Pi * f / c.fs
	return -2 * cmplx.Phase(c.f1.response(w)) / w
}

// level returns the RMS of the filtered signal's AC part over the window so
// far divided by the filter's gain at f (nominal when f is NaN): an estimate
// of the fundamental's RMS that does not depend on the window's cut. NaN
// before any sample.
func (c *crossings) level(f float64) float64 {
	if c.yN == 0 {
		return math.NaN()
	}
	if math.IsNaN(f) || f <= 0 {
		f = c.nomHz
	}
	n := float64(c.yN)
	m := c.ySum / n
	g := cmplx.Abs(c.f1.response(2 * math.Pi * f / c.fs))
	return math.Sqrt(max(0, c.ySq/n-m*m)) / (g * g)
}

// windowFreq returns the frequency from the crossings inside the window just
// ended, their number, and the fundamental's level (see level) at that
// frequency, and starts counting for the next window.
func (c *crossings) windowFreq() (f float64, n int, lvl float64) {
	f, n = c.win.freq(c.fs), c.win.n
	lvl = c.level(f)
	c.win = span{}
	c.ySum, c.ySq, c.yN = 0, 0, 0
	return f, n, lvl
}

// takeTen returns the last closed 10 s value once.
func (c *crossings) takeTen() (float64, bool) {
	if !c.hasTen {
		return 0, false
	}
	c.hasTen = false
	return c.closed, true
}

// reset forgets all crossings (after loss of signal).
func (c *crossings) resetCounts() {
	c.win = span{}
	c.armed = false
	c.hasLast = false
}
