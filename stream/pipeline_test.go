package stream

import (
	"context"
	"fmt"
	"math"
	"testing"
	"time"

	"github.com/gridloupe/gridloupe/metrics"
)

// Tolerances, each with its source.
const (
	// freqTol: IEC 61000-4-30 class A frequency uncertainty ±10 mHz (from memory).
	freqTol = 0.010
	// fundTol: IEC 61000-4-30 class A magnitude uncertainty ±0.1 % of the
	// declared voltage (from memory).
	fundTolPct = 0.1
	// pfTol: PF within 0.002 at off-nominal frequency, a figure in common
	// use for revenue-grade meters (common practice, no source).
	pfTol = 0.002
	// harmTol: IEC 61000-4-7 class I, harmonic voltages and currents
	// ≥ 1 % of nominal within ±5 % of reading (from memory).
	harmTol = 0.05
	// The project's own bounds, about twice the worst case measured by
	// TestOffNominalAccuracy over its ten cases (21 s each, seed fixed), so
	// that a regression far inside the standard's figures still fails:
	// ownFreqTol: measured 2.6 mHz (freq_hz and freq_10s_hz).
	ownFreqTol = 0.005
	// ownHarmTol: measured 1.2 % of reading (0.5 % noise), so a 3 %
	// scaling error fails.
	ownHarmTol = 0.025
	// ownPFTol: measured 3.9e-4.
	ownPFTol = 8e-4
	// (V1 has no bound of its own: the measured 0.081 % is already close to
	// the standard's 0.1 %, which stays the check.)
	// acquireWindows: windows allowed for acquisition after start-up or
	// re-lock before the accuracy checks apply (the README's "No lock"
	// paragraph: re-lock within two windows, three after a step).
	acquireWindows = 3
)

func runPipeline(t *testing.T, cfg Config, src FrameReader) ([]metrics.Record, *Pipeline) {
	t.Helper()
	p, err := New(cfg)
	if err != nil {
		t.Fatal(err)
	}
	var recs []metrics.Record
	if err := p.Run(context.Background(), src, func(r *metrics.Record) error {
		recs = append(recs, cloneRecord(r))
		return nil
	}); err != nil {
		t.Fatal(err)
	}
	return recs, p
}

// harmonic returns order h of channel c, or fails.
func harmonic(t *testing.T, r *metrics.Record, c, h int) metrics.Harmonic {
	t.Helper()
	for _, x := range r.Channels[c].H {
		if x.H == h {
			return x
		}
	}
	t.Fatalf("order %d not in record", h)
	return metrics.Harmonic{}
}

// TestOffNominalAccuracy holds frequency, fundamental, harmonics and PF to
// the class A / class I figures over the IEC 61000-4-30 frequency range,
// with 10 % 5th and 7th harmonics and 0.5 % white noise.
func TestOffNominalAccuracy(t *testing.T) {
	cases := []struct {
		nom, f float64
		src    string
	}{
		{50, 42.5, "IEC 61000-4-30 range 42.5–57.5 Hz for 50 Hz systems (from memory)"},
		{50, 47.5, "same range"},
		{50, 50, "nominal"},
		{50, 52, "same range"},
		{50, 57.5, "same range"},
		{60, 51, "IEC 61000-4-30 range 51–69 Hz for 60 Hz systems (from memory)"},
		{60, 59, "same range"},
		{60, 60, "nominal"},
		{60, 61, "same range"},
		{60, 69, "same range"},
	}
	seconds := 21.0
	if testing.Short() {
		seconds = 3
	}
	for _, tc := range cases {
		t.Run(fmt.Sprintf("%g_in_%g", tc.f, tc.nom), func(t *testing.T) {
			t.Parallel()
			const fs, vNom = 10240.0, 230.0
			// voltage: declared 230 V fundamental, 10 % 5th and 7th
			v := synthChan{tones: []tone{{1, vNom, 0}, {5, 23, 40}, {7, 23, -70}}, noise: 0.005 * vNom}
			// current: 100 A lagging 30°, 10 % 5th and 7th
			i := synthChan{tones: []tone{{1, 100, -30}, {5, 10, 150}, {7, 10, 20}}, noise: 0.5}
			s := setupOf(t, metrics.SinglePhase, vNom, 0, true, nil,
				metrics.Channel{Name: "v", Kind: metrics.Voltage, Phase: 'a'},
				metrics.Channel{Name: "i", Kind: metrics.Current, Phase: 'a'})
			recs, _ := runPipeline(t, Config{Setup: s, SampleRate: fs, NominalHz: tc.nom},
				newSynth(fs, constFreq(tc.f), seconds, v, i))
			if len(recs) < 10 {
				t.Fatalf("only %d windows", len(recs))
			}
			// closed forms: P = Σ Vh Ih cos(θv−θi); S = V·I with V² = ΣVh² (+ noise²)
			p := 230*100*math.Cos(30*math.Pi/180) + 23*10*math.Cos(-110*math.Pi/180) + 23*10*math.Cos(-90*math.Pi/180)
			vr := math.Sqrt(230*230 + 2*23*23 + math.Pow(0.005*vNom, 2))
			ir := math.Sqrt(100*100 + 2*10*10 + 0.25)
			wantPF := p / (vr * ir)
			tens := 0
			var worstF, worstV1, worstH, worstPF float64 // largest errors seen, checked against the project's bounds below
			for k, r := range recs[acquireWindows:] {
				if r.Flags&metrics.FlagNoLock != 0 {
					t.Fatalf("window %d: no_lock on a steady %g Hz signal", k+acquireWindows, tc.f)
				}
				worstF = max(worstF, math.Abs(r.FreqHz-tc.f))
				if d := math.Abs(r.FreqHz - tc.f); !(d <= freqTol) {
					t.Errorf("window %d: freq_hz %.5f, want %g ± %g (IEC 61000-4-30 class A, from memory)", k, r.FreqHz, tc.f, freqTol)
				}
				if r.HasFreq10s && r.Start.Sub(time.Unix(0, 0)) > 10*time.Second { // the first 10 s interval is complete
					tens++
					worstF = max(worstF, math.Abs(r.Freq10sHz-tc.f))
					if d := math.Abs(r.Freq10sHz - tc.f); !(d <= freqTol) {
						t.Errorf("freq_10s_hz %.5f, want %g ± %g (IEC 61000-4-30 10 s value, class A, from memory)", r.Freq10sHz, tc.f, freqTol)
					}
				}
				v1 := harmonic(t, &r, 0, 1).RMS
				worstV1 = max(worstV1, 100*math.Abs(v1-vNom)/vNom)
				if d := 100 * math.Abs(v1-vNom) / vNom; !(d <= fundTolPct) {
					t.Errorf("window %d: V1 %.4f V, want %g V ± %g %% (IEC 61000-4-30 class A, from memory)", k, v1, vNom, fundTolPct)
				}
				for _, h := range []int{5, 7} {
					// IEC 61000-4-7 class I, voltage ≥ 1 % of nominal: ±5 % of reading (from memory)
					got := harmonic(t, &r, 0, h).RMS
					worstH = max(worstH, math.Abs(got-23)/23)
					if d := math.Abs(got-23) / 23; !(d <= harmTol) {
						t.Errorf("window %d: V%d %.4f V, want 23 V ± 5 %% (IEC 61000-4-7 class I, from memory)", k, h, got)
					}
					got = harmonic(t, &r, 1, h).RMS
					worstH = max(worstH, math.Abs(got-10)/10)
					if d := math.Abs(got-10) / 10; !(d <= harmTol) {
						t.Errorf("window %d: I%d %.4f A, want 10 A ± 5 %% (IEC 61000-4-7 class I, from memory)", k, h, got)
					}
				}
				worstPF = max(worstPF, math.Abs(r.Phases[0].PF-wantPF))
				if d := math.Abs(r.Phases[0].PF - wantPF); !(d <= pfTol) {
					t.Errorf("window %d: pf %.5f, want %.5f ± %g (closed form P/S)", k, r.Phases[0].PF, wantPF, pfTol)
				}
			}
			t.Logf("worst errors: frequency %.2g Hz, V1 %.2g %%, 5th/7th %.2g of reading, pf %.2g", worstF, worstV1, worstH, worstPF)
			for _, b := range []struct {
				what         string
				worst, bound float64
			}{
				{"frequency (Hz)", worstF, ownFreqTol},
				{"5th/7th (fraction of reading)", worstH, ownHarmTol}, {"pf", worstPF, ownPFTol},
			} {
				if !(b.worst <= b.bound) {
					t.Errorf("%s: worst error %.3g over the project's own bound %.3g (about twice the measured worst case)", b.what, b.worst, b.bound)
				}
			}
			if !testing.Short() && tens == 0 {
				t.Errorf("no complete 10 s frequency value in %g s", seconds)
			}
		})
	}
}

// TestRampFollowed follows a 0.5 Hz/s ramp and reports the lag. The window
// frequency is measured inside the window, so it estimates the mean
// frequency over the window, i.e. the value at its middle.
func TestRampFollowed(t *testing.T) {
	const fs, slope = 10240.0, 0.5
	freq := func(t float64) float64 { return 49 + slope*t }
	v := synthChan{tones: []tone{{1, 230, 0}, {5, 23, 0}, {7, 23, 0}}, noise: 1.15}
	s := setupOf(t, metrics.SinglePhase, 230, 0, false, []int{1, 5, 7},
		metrics.Channel{Name: "v", Kind: metrics.Voltage, Phase: 'a'})
	recs, _ := runPipeline(t, Config{Setup: s, SampleRate: fs, NominalHz: 50}, newSynth(fs, freq, 4, v))
	var sumErr float64
	var n int
	for _, r := range recs[acquireWindows:] {
		mid := float64(r.Start.UnixNano())/1e9 + r.DurationS/2
		err := r.FreqHz - freq(mid)
		if !(math.Abs(err) <= freqTol) {
			t.Errorf("at %.2f s: freq_hz %.4f, true mid-window %.4f (error %.4f Hz > %g)", mid, r.FreqHz, freq(mid), err, freqTol)
		}
		if r.Flags&metrics.FlagNoLock != 0 {
			t.Errorf("at %.2f s: no_lock during a 0.5 Hz/s ramp", mid)
		}
		sumErr += err
		n++
	}
	lag := -sumErr / float64(n) / slope
	t.Logf("0.5 Hz/s ramp: mean error %.5f Hz, lag %.2f ms behind the window mid-point", sumErr/float64(n), lag*1000)
	if math.Abs(lag) > 0.02 {
		t.Errorf("lag %.1f ms, want under 20 ms (one cycle)", lag*1000)
	}
}

// TestLossOfSignal: below lock_min_pct the tracker reports no lock, cuts
// nominal-length windows with null angles, and re-locks within two windows.
func TestLossOfSignal(t *testing.T) {
	const fs = 10240.0
	gain := func(t float64) float64 {
		if t >= 1 && t < 2 {
			return 0.05 // 5 % of nominal, under the 10 % default
		}
		return 1
	}
	v := synthChan{tones: []tone{{1, 230, 0}}, noise: 0.1, gain: gain}
	s := setupOf(t, metrics.SinglePhase, 230, 0, false, []int{1, 5},
		metrics.Channel{Name: "v", Kind: metrics.Voltage, Phase: 'a'})
	recs, _ := runPipeline(t, Config{Setup: s, SampleRate: fs, NominalHz: 50}, newSynth(fs, constFreq(48.7), 3.2, v))
	var lost, back int
	relock := -1
	for k, r := range recs {
		st := float64(r.Start.UnixNano()) / 1e9
		end := st + r.DurationS
		switch {
		case st >= 1.2 && end <= 2: // the window cut before the loss was seen keeps its tracked length
			lost++
			if r.Flags&metrics.FlagNoLock == 0 {
				t.Errorf("window at %.2f s: signal at 5 %% but no no_lock flag", st)
			}
			if r.Samples != 2048 {
				t.Errorf("window at %.2f s: %d samples without lock, want nominal 2048 (10 cycles of 50 Hz at 10.24 kHz)", st, r.Samples)
			}
			if !metrics.IsNull(r.FreqHz) {
				t.Errorf("window at %.2f s: freq_hz %v without lock, want null", st, r.FreqHz)
			}
			if ph := r.Channels[0].H[0].PhaseDeg; !metrics.IsNull(ph) {
				t.Errorf("window at %.2f s: phase_deg %v without lock, want null", st, ph)
			}
		case st >= 2:
			back++
			if relock < 0 && r.Flags&metrics.FlagNoLock == 0 {
				relock = back
				_ = k
			}
		}
	}
	if lost < 3 {
		t.Fatalf("only %d windows inside the loss", lost)
	}
	if relock < 0 || relock > 2 {
		t.Errorf("re-locked at window %d after the signal returned, want within 2 (the README's No lock paragraph)", relock)
	}
	t.Logf("re-lock at window %d after the signal returned", relock)
}

// TestGaplessWindows: the windows tile the input exactly, whatever the
// block size the source returns and whatever the frequency.
func TestGaplessWindows(t *testing.T) {
	for _, f := range []float64{42.5, 49.9, 50, 53.3, 57.5} {
		const fs = 12800.0
		v := synthChan{tones: []tone{{1, 230, 0}}}
		s := setupOf(t, metrics.SinglePhase, 230, 0, false, []int{1},
			metrics.Channel{Name: "v", Kind: metrics.Voltage, Phase: 'a'})
		total := uint64(3.3 * fs)
		recs, p := runPipeline(t, Config{Setup: s, SampleRate: fs, NominalHz: 50, BlockFrames: 97}, newSynth(fs, constFreq(f), 3.3, v))
		var sum uint64
		clk := NewClock(time.Unix(0, 0).UTC(), fs)
		for k, r := range recs {
			if want := clk.Time(sum); !r.Start.Equal(want) {
				t.Fatalf("%g Hz window %d starts %v, want %v (gapless: previous windows hold %d samples)", f, k, r.Start, want, sum)
			}
			sum += r.Samples
		}
		if got := sum + uint64(p.Leftover()); got != total {
			t.Errorf("%g Hz: windows hold %d + leftover %d = %d samples, input had %d", f, sum, p.Leftover(), got, total)
		}
		// After acquisition a window holds 10 cycles to within one sample:
		// its edges sit at the ideal fractional positions and it takes the
		// whole samples between them (closed form: |N − 10·fs/f| < 1).
		for _, r := range recs[acquireWindows:] {
			cyc := float64(r.Samples) * f / fs
			if math.Abs(cyc-10) > f/fs {
				t.Errorf("%g Hz: window of %d samples holds %.4f cycles, want 10 (IEC 61000-4-7 synchronized window)", f, r.Samples, cyc)
			}
		}
	}
}

// TestTenSecondAcrossGap: an interruption inside a 10 s interval leaves no
// cycles behind, so the 10 s value stays right: whole cycles counted divided
// by their own duration (IEC 61000-4-30, from memory), not by the span that
// includes the gap.
func TestTenSecondAcrossGap(t *testing.T) {
	const fs = 10240.0
	gain := func(t float64) float64 {
		if t >= 3 && t < 4 {
			return 0
		}
		return 1
	}
	v := synthChan{tones: []tone{{1, 230, 0}, {5, 11.5, 30}}, noise: 0.2, gain: gain}
	s := setupOf(t, metrics.SinglePhase, 230, 0, false, []int{1, 5},
		metrics.Channel{Name: "v", Kind: metrics.Voltage, Phase: 'a'})
	recs, _ := runPipeline(t, Config{Setup: s, SampleRate: fs, NominalHz: 50}, newSynth(fs, constFreq(49.97), 10.5, v))
	n := 0
	for _, r := range recs {
		if !r.HasFreq10s {
			continue
		}
		n++
		if d := math.Abs(r.Freq10sHz - 49.97); !(d <= freqTol) {
			t.Errorf("freq_10s_hz %.4f with a 1 s interruption inside, want 49.97 ± %g (IEC 61000-4-30 class A, from memory)", r.Freq10sHz, freqTol)
		}
	}
	if n == 0 {
		t.Fatal("no 10 s value")
	}
}

// TestFrequencyStep: after a step of the supply frequency the tracker
// re-locks within three windows, counting the one that holds the step (the
// README states this; common practice, no source). Steps inside and beyond
// the ±4 % refinement range.
func TestFrequencyStep(t *testing.T) {
	const fs = 10240.0
	for _, to := range []float64{50.5, 51.5, 53, 47.5, 42.5, 57.5} {
		freq := func(t float64) float64 {
			if t < 2.0 {
				return 50
			}
			return to
		}
		v := synthChan{tones: []tone{{1, 230, 0}, {5, 11.5, 30}}, noise: 0.2}
		s := setupOf(t, metrics.SinglePhase, 230, 0, false, []int{1, 5},
			metrics.Channel{Name: "v", Kind: metrics.Voltage, Phase: 'a'})
		recs, _ := runPipeline(t, Config{Setup: s, SampleRate: fs, NominalHz: 50}, newSynth(fs, freq, 4, v))
		k := -1 // windows from the one holding the step
		relock := -1
		for _, r := range recs {
			st := float64(r.Start.UnixNano()) / 1e9
			if k < 0 && st+r.DurationS > 2.0 {
				k = 0
			}
			if k < 0 {
				continue
			}
			k++
			if r.Flags&metrics.FlagNoLock == 0 && st >= 2.0 {
				relock = k
				break
			}
		}
		if relock < 0 || relock > 3 {
			t.Errorf("step 50 → %g Hz: locked again at window %d from the step, want within 3", to, relock)
		}
	}
}
