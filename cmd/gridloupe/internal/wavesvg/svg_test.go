package wavesvg

import (
	"math"
	"strings"
	"testing"
	"time"

	"github.com/gridloupe/gridloupe/metrics/events"
	"github.com/gridloupe/gridloupe/store"
)

// TestHalfCycleRMS: a 230 V sine gives 230 V on every full cycle, and a
// step to 0 V halfway gives sqrt(230²/2) on the cycle that straddles it
// (closed form: the mean square of whole half cycles of a sine is A²/2).
func TestHalfCycleRMS(t *testing.T) {
	const fs, f = 12800.0, 50.0 // 128 samples per half cycle
	s := make([]float32, 128*20)
	for i := range s {
		if i < 128*10 {
			s[i] = float32(230 * math.Sqrt2 * math.Sin(2*math.Pi*f*float64(i)/fs))
		}
	}
	pts := halfCycleRMS(s, fs, f, 0)
	if len(pts) != 19 {
		t.Fatalf("%d values, want 19 (one per half cycle after the first full cycle)", len(pts))
	}
	// V: the project's own bound, ~2x the measured worst (8.1e-7 V, from
	// float32 samples of a 325 V peak); no standard sets one for a plot.
	const tol = 2e-6
	for k, p := range pts {
		want := 230.0
		switch {
		case k == 9:
			want = 230 / math.Sqrt2
		case k > 9:
			want = 0
		}
		if math.Abs(p.v-want) > tol {
			t.Errorf("value %d: %v V, want %v", k, p.v, want)
		}
	}
}

// TestDrawMarksEverything: the drawing carries every figure of the event
// and its thresholds, each value from the record and waveform built here.
func TestDrawMarksEverything(t *testing.T) {
	start := time.Date(2026, 3, 1, 10, 0, 1, 0, time.UTC)
	w := &store.Waveform{Start: start.Add(-200 * time.Millisecond), SampleRate: 6400, DeclaredV: 230, NominalHz: 50,
		DipPct: 90, SwellPct: 110, IntPct: 5, HystPct: 2,
		Channels: []store.WaveChannel{{Name: "va", Voltage: true}, {Name: "ia"}},
		Samples:  [][]float32{make([]float32, 3200), make([]float32, 3200)}}
	for i := range 3200 {
		w.Samples[0][i] = float32(325 * math.Sin(2*math.Pi*50*float64(i)/6400))
		w.Samples[1][i] = float32(40 * math.Sin(2*math.Pi*50*float64(i)/6400))
	}
	r := &events.Record{Kind: events.Swell, Start: start, DurationS: 0.1, Channels: []string{"va"}, Worst: "va", ExtremeV: 264.5, ExtremePct: 115}
	svg := string(Draw(w, r, "Larkfield <AH-4>", "caution text"))
	for _, want := range []string{
		"Larkfield &lt;AH-4&gt;",             // the title, XML-escaped (XML 1.0 §2.4)
		"Swell",                              // r.Kind
		"maximum 264.5 V (115.0 % of 230 V)", // r.ExtremeV, r.ExtremePct and w.DeclaredV above
		"swell 110 % · ends below 108 %",     // w.SwellPct, and SwellPct-HystPct = 110-2 (IEC 61000-4-30 5.4.3: a swell ends at threshold minus hysteresis)
		"current samples (A)",                // the second channel is a current
		"caution text",                       // the caution passed in
		"-200",                               // w.Start is 200 ms before r.Start: the time axis counts from the event
	} {
		if !strings.Contains(svg, want) {
			t.Errorf("SVG lacks %q", want)
		}
	}
	if strings.Contains(svg, "NaN") || strings.Contains(svg, "Inf") {
		t.Error("SVG holds NaN or Inf")
	}
}
