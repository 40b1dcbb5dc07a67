package goertzel

import (
	"fmt"
	"math"
)

// MaxWindow is the longest window a Sliding accepts, in samples (about
// 100 s at 10.24 kHz). It bounds the ring buffer and twiddle table.
const MaxWindow = 1 << 20

// resumWindows is the re-sum period in windows: every resumWindows·n pushed
// samples the running sums are recomputed exactly from the ring buffer, so
// the cost is 1/resumWindows of a re-sum per sample, amortized.
const resumWindows = 64

// Sliding is a sliding DFT over the last n samples: after every pushed sample
// it holds the RMS phasor of each integer bin k (k cycles per window,
// w = k/n) and the sum of squares of the window, at constant cost per sample
// per bin.
//
// It is a modulated sliding DFT (mSDFT, after Duda 2010). Each bin keeps the
// running sum Y_k = Σ x[m]·e^{−j2πkm/n} over the window, m being the absolute
// sample index, so an update only adds (x[m] − x[m−n])·e^{−j2πk(m mod n)/n}
// from a precomputed table of length n: the feedback coefficient is exactly
// 1, with no twiddle in the loop that could push a pole off the unit circle.
// The phasor is Y_k rotated to the window's oldest sample on read. Additions
// and removals still round, so every 64·n samples (and at once when a NaN or
// Inf leaves the window) the sums are recomputed exactly from the ring
// buffer; drift is bounded by what 64 windows of updates can round. That
// re-sum makes one Push in 64·n cost O(n·bins); all others are O(bins).
//
// Before n samples have been pushed the window is taken as zero-padded: the
// missing oldest samples count as zeros, and the angle is still referred to
// the (virtual) oldest sample, n−1 samples before the newest.
//
// A Sliding is not safe for concurrent use.
type Sliding struct {
	n      int
	bins   []int
	idx    []int     // per bin: k·pos mod n, the table index of the next slot
	cosT   []float64 // cos(2πi/n), i = 0..n−1
	sinT   []float64 // sin(2πi/n)
	re, im []float64 // per bin: Y_k
	ring   []float64 // last n samples; sample m lives in ring[m mod n]
	pos    int       // slot of the next sample, and of the oldest one
	ss     float64   // Σx² over the window
	count  uint64    // samples pushed since Reset
	left   int       // pushes until the next periodic re-sum
}

// NewSliding returns a Sliding over windows of n samples (1..MaxWindow) for
// the given integer bins, each with 1 ≤ k < n/2. The bins are copied; their
// order is kept (Phasor(i) is bins[i]).
func NewSliding(n int, bins []int) (*Sliding, error) {
	if n < 1 || n > MaxWindow {
		return nil, fmt.Errorf("window of %d samples outside 1..%d: %w", n, MaxWindow, ErrWindow)
	}
	if len(bins) == 0 {
		return nil, fmt.Errorf("no bins: %w", ErrBins)
	}
	for i, k := range bins {
		if k < 1 || 2*k >= n {
			return nil, fmt.Errorf("bin %d at index %d outside 1 ≤ k < %d/2: %w", k, i, n, ErrBins)
		}
	}
	m := len(bins)
	s := &Sliding{
		n:    n,
		bins: append([]int(nil), bins...),
		idx:  make([]int, m),
		cosT: make([]float64, n),
		sinT: make([]float64, n),
		re:   make([]float64, m),
		im:   make([]float64, m),
		ring: make([]float64, n),
	}
	for i := range n {
		s.sinT[i], s.cosT[i] = math.Sincos(2 * math.Pi * float64(i) / float64(n))
	}
	s.Reset()
	return s, nil
}

// Reset empties the window (all zeros) and restarts the sample count.
func (s *Sliding) Reset() {
	clear(s.ring)
	clear(s.re)
	clear(s.im)
	clear(s.idx)
	s.pos = 0
	s.ss = 0
	s.count = 0
	s.left = resumWindows * s.n
}

// Push adds one sample, dropping the oldest.
func (s *Sliding) Push(x float64) {
	old := s.ring[s.pos]
	d := x - old
	n := s.n
	for b, k := range s.bins {
		j := s.idx[b]
		s.re[b] += d * s.cosT[j]
		s.im[b] -= d * s.sinT[j]
		j += k
		if j >= n {
			j -= n
		}
		s.idx[b] = j
	}
	s.ss += x*x - old*old
	s.ring[s.pos] = x
	s.pos++
	if s.pos == n {
		s.pos = 0
	}
	s.count++
	s.left--
	// old−old is non-zero (NaN) exactly when old is NaN or ±Inf: such a
	// sample leaves sums that subtraction cannot repair, so re-sum now.
	if s.left <= 0 || old-old != 0 {
		s.resum()
	}
}

// Write pushes every sample of x in order.
func (s *Sliding) Write(x []float64) {
	for _, v := range x {
		s.Push(v)
	}
}

// resum recomputes the running sums exactly from the ring buffer. Slot i
// holds a sample whose absolute index is ≡ i (mod n), so its modulation is
// the table entry (k·i) mod n.
func (s *Sliding) resum() {
	n := s.n
	for b, k := range s.bins {
		var re, im float64
		j := 0
		for _, v := range s.ring {
			re += v * s.cosT[j]
			im -= v * s.sinT[j]
			j += k
			if j >= n {
				j -= n
			}
		}
		s.re[b], s.im[b] = re, im
	}
	var ss float64
	for _, v := range s.ring {
		ss += v * v
	}
	s.ss = ss
	s.left = resumWindows * n
}

// Phasor returns the RMS phasor of bins[i] over the last n samples, with its
// angle at the oldest sample of the window: the value Phasor(window, k/n)
// would return. It panics if i is out of range.
func (s *Sliding) Phasor(i int) complex128 {
	if i < 0 || i >= len(s.bins) {
		panic(fmt.Sprintf("goertzel: Sliding.Phasor: bin index %d out of range [0, %d)", i, len(s.bins)))
	}
	// idx[i] = k·pos mod n, and pos is the oldest sample's slot: rotating by
	// e^{+j2πk·pos/n} moves the reference from absolute index 0 to it.
	j := s.idx[i]
	y := complex(s.re[i], s.im[i]) * complex(s.cosT[j], s.sinT[j])
	return y * complex(rmsScale/float64(s.n), 0)
}

// SumSquares returns Σx² over the last n samples (never negative). With a
// one-cycle window read every half cycle, sqrt(SumSquares()/n) is the
// Urms(1/2) of IEC 61000-4-30.
func (s *Sliding) SumSquares() float64 {
	return max(s.ss, 0)
}

// N returns the window length in samples.
func (s *Sliding) N() int { return s.n }

// Bins returns a copy of the bins, in the order given to NewSliding.
func (s *Sliding) Bins() []int { return append([]int(nil), s.bins...) }

// Count returns the number of samples pushed since Reset. It is a uint64 so
// it cannot wrap on 32-bit platforms.
func (s *Sliding) Count() uint64 { return s.count }
