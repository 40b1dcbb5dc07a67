package metrics

import (
	"math"
	"testing"
)

// TestCrestFactor: peak over RMS of waveforms with closed forms, sampled
// at the test's 1200 samples per cycle (the peak sample of a sine at
// θ = 2π(i+½)/1200 misses the crest by half a sample: cos(π/1200)).
func TestCrestFactor(t *testing.T) {
	t.Parallel()
	s := singleSetup(t)
	// tolSampledPeak: the sampled peak of a sine lies within 1 − cos(π/1200)
	// = 3.4e-6 of the true one (closed form); rounding is far below.
	const tolSampledPeak = 4e-6
	cases := []struct {
		name string
		i    wave
		want float64
		tol  float64
		src  string
	}{
		{"sine", cosine(100, 1, 0), math.Sqrt2, tolSampledPeak * math.Sqrt2, "closed form: a sine's crest factor is √2"},
		{"square", square(40), 1, tolExact, "closed form: a square wave's peak equals its RMS"},
		{"120° blocks", block120(60), math.Sqrt(1.5), tolExact, "closed form: Irms = √(2/3)·Idc, so Idc/Irms = √(3/2)"},
		{"sine with 3rd in phase at the crest", sum(cosine(100, 1, 0), cosine(20, 3, 0)), 120 * math.Sqrt2 / math.Hypot(100, 20),
			// half a sample off the crest the sum drops by (100 + 9·20)/120 · (1 − cos(π/1200)) = 8e-6 relative
			1e-5 * 1.6641, "closed form: at θ = 0 both peak, (100+20)·√2 over √(100²+20²)"},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			t.Parallel()
			r := compute(t, s, inputFor(t, s, waves(nWin, cosine(230, 1, 0), c.i)))
			if got := r.Channels[1].CrestFactor; !near(got, c.want, c.tol) {
				t.Errorf("crest_factor %.9g, want %.9g (%s)", got, c.want, c.src)
			}
		})
	}
}

// TestCrestFactorAggregates: intervals keep the largest window value and
// skip null windows (README "Aggregation").
func TestCrestFactorAggregates(t *testing.T) {
	t.Parallel()
	s := singleSetup(t)
	a := NewAggregator(s)
	for _, cf := range []float64{1.41, 2.6, Null(), 1.9} {
		r := compute(t, s, inputFor(t, s, waves(nWin, cosine(230, 1, 0), cosine(100, 1, 0))))
		r.Interval = Int200ms
		r.Channels[1].CrestFactor = cf
		a.Add(r)
	}
	out := NewRecord(s)
	a.Result(out)
	if got := out.Channels[1].CrestFactor; got != 2.6 {
		t.Errorf("aggregated crest_factor %v, want the largest window value 2.6 (README \"Aggregation\")", got)
	}
}
