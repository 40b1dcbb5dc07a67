package compliance

import (
	"math"
	"math/rand/v2"
	"slices"
	"testing"

	"gonum.org/v1/gonum/stat"
)

// tolF32 is the tolerance for a value read back from the float32 tail:
// float32 keeps 24 bits, a relative error of at most 2^-24 ≈ 6e-8.
const tolF32 = 1e-7

func percentileOf(vals []float64, k, pct int) (float64, bool) {
	t := newTail(k)
	for _, v := range vals {
		t.push(float32(v))
	}
	return t.percentile(pct)
}

func TestPercentileHand(t *testing.T) {
	t.Parallel()
	seq := func(n int) []float64 { // 1, 2, ..., n in shuffled order
		v := make([]float64, n)
		for i := range v {
			v[i] = float64(i + 1)
		}
		rand.New(rand.NewPCG(1, 2)).Shuffle(n, func(i, j int) { v[i], v[j] = v[j], v[i] })
		return v
	}
	wiki := []float64{35, 20, 50, 15, 40}
	tests := []struct {
		name string
		vals []float64
		pct  int
		want float64
		src  string
	}{
		{"5 values p30", wiki, 30, 20, "nearest-rank worked example {15,20,35,40,50}: rank ⌈0.3·5⌉ = 2 (Wikipedia 'Percentile', nearest-rank method; from memory, recomputed by hand)"},
		{"5 values p40", wiki, 40, 20, "same example: rank ⌈0.4·5⌉ = 2"},
		{"5 values p50", wiki, 50, 35, "same example: rank ⌈0.5·5⌉ = 3"},
		{"5 values p100", wiki, 100, 50, "same example: rank 5"},
		{"5 values p95", wiki, 95, 50, "hand: rank ⌈4.75⌉ = 5"},
		{"100 values p99", seq(100), 99, 99, "hand: 1..100, rank ⌈99⌉ = 99"},
		{"100 values p95", seq(100), 95, 95, "hand: 1..100, rank 95"},
		{"101 values p99", seq(101), 99, 100, "hand: 1..101, rank ⌈99.99⌉ = 100"},
		{"a day of 3 s values p99", seq(Day3sValues), 99, 28512, "hand: 1..28800, rank ⌈0.99·28800⌉ = 28512: 288 values (1 %) lie above"},
		{"a week of 10 min values p95", seq(Week10minValues), 95, 958, "hand: 1..1008, rank ⌈957.6⌉ = 958"},
		{"a week of 10 min values p99", seq(Week10minValues), 99, 998, "hand: 1..1008, rank ⌈997.92⌉ = 998"},
		{"one value", []float64{3.5}, 99, 3.5, "hand: the only value"},
	}
	for _, tc := range tests {
		t.Run(tc.name, func(t *testing.T) {
			got, ok := percentileOf(tc.vals, tailCap(int64(len(tc.vals)), tc.pct), tc.pct)
			if !ok || math.Abs(got-tc.want) > tolF32*tc.want {
				t.Errorf("p%d = %v, %v; want %v (%s)", tc.pct, got, ok, tc.want, tc.src)
			}
		})
	}
}

// TestPercentileGonum cross-checks the tail against gonum's
// stat.Quantile(p, stat.Empirical, ...) on random data of many sizes,
// including the exact multiples of 100 where p·n is an integer.
func TestPercentileGonum(t *testing.T) {
	t.Parallel()
	rng := rand.New(rand.NewPCG(42, 7))
	sizes := []int{1, 2, 3, 19, 20, 21, 99, 100, 101, 199, 200, 201, 1007, 1008, 1009, 2000, 28800}
	for range 40 {
		sizes = append(sizes, 1+rng.IntN(5000))
	}
	for _, n := range sizes {
		vals := make([]float64, n)
		for i := range vals {
			// float32-representable, so the tail keeps them exactly; ties on purpose
			vals[i] = float64(float32(math.Round(rng.NormFloat64()*400) / 100))
		}
		sorted := slices.Clone(vals)
		slices.Sort(sorted)
		for _, pct := range []int{95, 99} {
			want := stat.Quantile(float64(pct)/100, stat.Empirical, sorted, nil) // gonum computation
			got, ok := percentileOf(vals, tailCap(int64(n), pct), pct)
			if !ok || got != want {
				t.Errorf("n %d p%d: tail %v (%v), gonum Empirical %v", n, pct, got, ok, want)
			}
			if r := sorted[rankAsc(int64(n), pct)-1]; r != want { // the rank formula on the full sort
				t.Errorf("n %d p%d: rank formula %v, gonum %v", n, pct, r, want)
			}
		}
	}
}

func TestTailOverflow(t *testing.T) {
	t.Parallel()
	tl := newTail(tailCap(100, 99)) // sized for 100 values: keeps 2
	for i := range 200 {
		tl.push(float32(i))
	}
	// 200 values need the 3rd largest (rank ⌊0.01·200⌋+1 = 3; hand): not kept
	if v, ok := tl.percentile(99); ok {
		t.Errorf("overfull tail: p99 = %v, ok; want not ok", v)
	}
	tl.reset()
	if _, ok := tl.percentile(99); ok {
		t.Error("empty tail: want not ok")
	}
	tl.push(2)
	tl.push(1)
	if v, ok := tl.percentile(99); !ok || v != 2 { // hand: {1,2}, rank ⌈1.98⌉ = 2
		t.Errorf("after reset: p99 = %v, %v; want 2", v, ok)
	}
	tl.push(0.5)                                   // the sorted tail is still a heap: pushing after percentile works
	if v, ok := tl.percentile(99); !ok || v != 2 { // hand: {0.5,1,2}, rank 3
		t.Errorf("push after percentile: p99 = %v, %v; want 2", v, ok)
	}
}
