package compliance

import (
	"math"
	"slices"
)

// rankAsc returns the nearest-rank position (1-based, ascending) of the
// pct-th percentile of n values: ⌈pct·n/100⌉, computed in integers so that
// no float rounding moves it. The pct-th percentile is the smallest value
// that at least pct % of the values are less than or equal to (the
// "nearest-rank" definition; gonum's stat.Quantile with stat.Empirical
// gives the same value). n must be positive.
func rankAsc(n int64, pct int) int64 { return (int64(pct)*n + 99) / 100 }

// rankDesc returns the same position counted from the largest value
// (1 = the largest): n − ⌈pct·n/100⌉ + 1 = ⌊(100−pct)·n/100⌋ + 1.
func rankDesc(n int64, pct int) int64 { return n - rankAsc(n, pct) + 1 }

// tailCap is how many of the largest values a tail must keep so that the
// pct-th percentile of up to maxN values can be read from it.
func tailCap(maxN int64, pct int) int { return int(rankDesc(maxN, pct)) }

// tail keeps the k largest of the values pushed to it (a min-heap of
// float32, so the smallest kept value is at the root) and how many values
// were pushed. Percentiles at or above the one the capacity was sized for
// can be read exactly while n stays within the sizing bound. A tail is not
// safe for concurrent use.
type tail struct {
	k    int
	n    int64
	heap []float32
}

func newTail(k int) tail { return tail{k: k, heap: make([]float32, 0, k)} }

// push adds v (a non-NaN value). It never allocates.
func (t *tail) push(v float32) {
	t.n++
	h := t.heap
	if len(h) < t.k {
		h = append(h, v) // within the capacity made by newTail
		i := len(h) - 1
		for i > 0 {
			p := (i - 1) / 2
			if h[p] <= h[i] {
				break
			}
			h[p], h[i] = h[i], h[p]
			i = p
		}
		t.heap = h
		return
	}
	if t.k == 0 || v <= h[0] {
		return
	}
	h[0] = v
	i := 0
	for {
		l := 2*i + 1
		if l >= len(h) {
			break
		}
		m := l
		if r := l + 1; r < len(h) && h[r] < h[l] {
			m = r
		}
		if h[i] <= h[m] {
			break
		}
		h[i], h[m] = h[m], h[i]
		i = m
	}
}

// percentile returns the pct-th nearest-rank percentile of the values
// pushed, and false when there are none or when the value fell out of the
// kept tail (more values than the tail was sized for). It sorts the kept
// values in place; an ascending array is still a valid min-heap, so the
// tail stays usable (for another percentile or more pushes).
func (t *tail) percentile(pct int) (float64, bool) {
	if t.n == 0 {
		return math.NaN(), false
	}
	r := rankDesc(t.n, pct)
	if r < 1 || r > int64(len(t.heap)) {
		return math.NaN(), false
	}
	slices.Sort(t.heap)
	return float64(t.heap[int64(len(t.heap))-r]), true
}

// reset empties the tail, keeping its storage.
func (t *tail) reset() {
	t.n = 0
	t.heap = t.heap[:0]
}
