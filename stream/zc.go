package stream

import "math"

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
// duration; cycles straddling the interval edges are discarded). The filter's
// group delay is constant for a steady frequency, so it does not bias the
// period. Positions are kept as a uint64 sample index plus a fraction.
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
	lastI   uint64 // the previous crossing, for the cycle it ends
	lastF   float64
	hasLast bool
	minP    float64 // shortest and longest plausible period, samples
	maxP    float64
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
		settle: uint64(fs / nominalHz * 3), closed: math.NaN(),
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

// windowFreq returns the frequency from the crossings inside the window just
// ended and starts counting for the next.
func (c *crossings) windowFreq() (f float64, n int) {
	f, n = c.win.freq(c.fs), c.win.n
	c.win = span{}
	return f, n
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
