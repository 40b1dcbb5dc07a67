package stream

import (
	"fmt"
	"math"
	"testing"
	"time"

	"github.com/gridloupe/gridloupe/metrics"
)

// Tracker tolerances.
const (
	// trackTolHz is the project's own bound on a steady window frequency at
	// full voltage (README "Accuracy"), beside IEC 61000-4-30 class A's
	// ±10 mHz (freqTol, from memory): measured worst 0.54 mHz.
	trackTolHz = 0.002
	// lowTolHz is the same at 12 % of nominal with the same 0.23 V of noise
	// (a signal-to-noise ratio of 42 dB): about twice the measured worst of
	// 2.9 mHz, and within class A.
	lowTolHz = 0.006
	// tenTolHz is the project's own bound on the 10 s value against the IEC
	// 61000-4-30 cycle count (whole cycles in the interval over their
	// duration, from memory) computed from the analytic phase: 2 mHz, a fifth
	// of class A's ±10 mHz.
	tenTolHz = 0.002
)

// oneChannel is a single-phase voltage setup computing only the fundamental.
func oneChannel(t testing.TB) *metrics.Setup {
	return setupOf(t.(interface{ Fatal(...any) }), metrics.SinglePhase, 230, 0, false, []int{1},
		metrics.Channel{Name: "v", Kind: metrics.Voltage, Phase: 'a'})
}

// TestAcquireWholeRange: a steady supply is acquired at every frequency of
// the tracking range (±30 % of nominal, DESIGN "Performance notes" and the
// README), in 0.1 Hz steps, for 50 and 60 Hz systems, at full voltage and
// at 12 % of it (just above the default lock_min_pct of 10 %), and read
// within the project's bound. The bands one 5 Hz bin from nominal
// (44.6–45.4, 54.6–55.4, 64.6–65.4 Hz) are the ones a cut-dependent level
// test misses: there the tone sits in a null of the nominal-length window.
func TestAcquireWholeRange(t *testing.T) {
	const fs = 10240.0
	for _, nom := range []float64{50, 60} {
		for _, lvl := range []float64{1, 0.12} {
			t.Run(fmt.Sprintf("%g_Hz_at_%g", nom, lvl), func(t *testing.T) {
				t.Parallel()
				s := oneChannel(t)
				lo, hi := math.Ceil(nom*(1-trackRange)*10), math.Floor(nom*(1+trackRange)*10)
				worst := 0.0
				stepK := 1.0
				if testing.Short() && lvl < 1 {
					stepK = 5 // the low level in 0.5 Hz steps under -short; full runs take 0.1 Hz
				}
				for k := lo; k <= hi; k += stepK {
					f := k / 10
					v := synthChan{tones: []tone{{1, 230 * lvl, 17}, {3, 230 * lvl * 0.03, 40}, {5, 230 * lvl * 0.05, 100}}, noise: 0.001 * 230}
					recs, _ := runPipeline(t, Config{Setup: s, SampleRate: fs, NominalHz: nom}, newSynth(fs, constFreq(f), 1.3, v))
					if len(recs) <= acquireWindows {
						t.Fatalf("%g Hz: only %d windows", f, len(recs))
					}
					for w, r := range recs[acquireWindows:] {
						if r.Flags&metrics.FlagNoLock != 0 {
							t.Errorf("%g Hz at %g of nominal: window %d no_lock, want acquired within %d windows (README)", f, lvl, w+acquireWindows, acquireWindows)
							break
						}
						d := math.Abs(r.FreqHz - f)
						worst = max(worst, d)
						tol := trackTolHz
						if lvl < 1 {
							tol = lowTolHz
						}
						if !(d <= tol) {
							t.Errorf("%g Hz at %g of nominal: window %d freq_hz %.5f, want ± %g (project bound)", f, lvl, w+acquireWindows, r.FreqHz, tol)
							break
						}
					}
				}
				t.Logf("worst steady frequency error %.2g Hz", worst)
			})
		}
	}
}

// TestStepIntoMissedBands: a step from nominal into a band one bin away is
// followed within three windows (README), and every window flagged no_lock
// carries a null freq_hz (DESIGN "Conventions of measurement").
func TestStepIntoMissedBands(t *testing.T) {
	const fs = 10240.0
	cases := []struct{ nom, to float64 }{
		{50, 45.3}, {50, 44.6}, {50, 45}, {50, 55}, {50, 55.4},
		{60, 54.6}, {60, 55}, {60, 65}, {60, 65.4},
	}
	for _, tc := range cases {
		t.Run(fmt.Sprintf("%g_to_%g", tc.nom, tc.to), func(t *testing.T) {
			t.Parallel()
			freq := func(t float64) float64 {
				if t < 1.0 {
					return tc.nom
				}
				return tc.to
			}
			v := synthChan{tones: []tone{{1, 230, 0}, {5, 11.5, 30}}, noise: 0.2}
			recs, _ := runPipeline(t, Config{Setup: oneChannel(t), SampleRate: fs, NominalHz: tc.nom}, newSynth(fs, freq, 2.5, v))
			k, relock := -1, -1
			for _, r := range recs {
				if r.Flags&metrics.FlagNoLock != 0 && !metrics.IsNull(r.FreqHz) {
					t.Errorf("window at %v: no_lock with freq_hz %v, want null", r.Start, r.FreqHz)
				}
				st := float64(r.Start.UnixNano()) / 1e9
				if k < 0 && st+r.DurationS > 1.0 {
					k = 0
				}
				if k < 0 {
					continue
				}
				k++
				if relock < 0 && r.Flags&metrics.FlagNoLock == 0 && st >= 1.0 {
					relock = k
					if d := math.Abs(r.FreqHz - tc.to); !(d <= trackTolHz) {
						t.Errorf("first locked window: freq_hz %.5f, want %g ± %g (project bound)", r.FreqHz, tc.to, trackTolHz)
					}
				}
			}
			if relock < 0 || relock > 3 {
				t.Errorf("step %g → %g Hz: locked again at window %d from the step, want within 3", tc.nom, tc.to, relock)
			}
		})
	}
}

// iecTen returns the IEC 61000-4-30 10 s value (from memory: whole cycles
// of the fundamental inside [t0, t1) divided by their total duration) for a
// cosine of phase 2π·cyc(t), from its positive-going zero crossings, where
// cyc(t) = ∫f is the analytic cycle count and inv its inverse.
func iecTen(t0, t1 float64, cyc, inv func(float64) float64) float64 {
	// positive-going crossings of cos(2π·c) sit at c = k − 1/4
	k0 := math.Ceil(cyc(t0) + 0.25)
	k1 := math.Ceil(cyc(t1)+0.25) - 1 // last crossing before t1
	ta, tb := inv(k0-0.25), inv(k1-0.25)
	return (k1 - k0) / (tb - ta)
}

// TestTenSecondOnRampAndStep: the 10 s value equals the IEC cycle count on
// a ramp over the whole interval and on a step inside it. The reference is
// the closed form of iecTen, not the tracker: for f = f0 + a·(t − t0) the
// cycle count is a quadratic in t.
func TestTenSecondOnRampAndStep(t *testing.T) {
	const fs = 10240.0
	type prof struct {
		name     string
		nom      float64
		f        func(float64) float64
		cyc, inv func(float64) float64
	}
	ramp := func(nom, f0, a, t0 float64) prof {
		c0 := f0 * t0
		f := func(t float64) float64 {
			if t < t0 {
				return f0
			}
			return f0 + a*(t-t0)
		}
		cyc := func(t float64) float64 {
			if t < t0 {
				return f0 * t
			}
			u := t - t0
			return c0 + f0*u + a*u*u/2
		}
		inv := func(c float64) float64 {
			if c < c0 {
				return c / f0
			}
			d := c - c0 // a/2·u² + f0·u − d = 0
			if a == 0 {
				return t0 + d/f0
			}
			return t0 + (-f0+math.Sqrt(f0*f0+2*a*d))/a
		}
		return prof{fmt.Sprintf("ramp %g Hz + %g Hz/s from %g s", f0, a, t0), nom, f, cyc, inv}
	}
	step := func(nom, f0, f1, ts float64) prof {
		f := func(t float64) float64 {
			if t < ts {
				return f0
			}
			return f1
		}
		cyc := func(t float64) float64 {
			if t < ts {
				return f0 * t
			}
			return f0*ts + f1*(t-ts)
		}
		inv := func(c float64) float64 {
			if c < f0*ts {
				return c / f0
			}
			return ts + (c-f0*ts)/f1
		}
		return prof{fmt.Sprintf("step %g → %g Hz at %g s", f0, f1, ts), nom, f, cyc, inv}
	}
	cases := []prof{
		ramp(50, 47.5, 0.5, 10),   // 47.5 → 52.5 Hz over the interval [10 s, 20 s)
		ramp(60, 61.5, -0.3, 10),  // 61.5 → 58.5 Hz
		step(50, 49.9, 50.1, 15),  // inside the interval
		step(60, 60.2, 59.85, 13), // inside the interval
	}
	for _, tc := range cases {
		t.Run(tc.name, func(t *testing.T) {
			t.Parallel()
			v := synthChan{tones: []tone{{1, 230, 0}, {3, 6.9, 20}, {5, 11.5, 30}}, noise: 0.2}
			recs, _ := runPipeline(t, Config{Setup: oneChannel(t), SampleRate: fs, NominalHz: tc.nom}, newSynth(fs, tc.f, 21, v))
			want := iecTen(10, 20, tc.cyc, tc.inv)
			var got []float64
			for _, r := range recs {
				if r.HasFreq10s {
					got = append(got, r.Freq10sHz)
				}
			}
			if len(got) < 2 {
				t.Fatalf("%d 10 s values in 21 s, want 2", len(got))
			}
			if d := math.Abs(got[1] - want); !(d <= tenTolHz) {
				t.Errorf("freq_10s_hz %.5f for [10 s, 20 s), IEC cycle count %.5f: off by %.2g Hz, want ± %g (project bound)", got[1], want, d, tenTolHz)
			}
			t.Logf("freq_10s_hz %.6f, IEC cycle count %.6f", got[1], want)
		})
	}
}

// TestTenSecondRecordCarriesValue: the 10 s value arrives on a record that
// starts at most one window after the interval's end (DESIGN "replay").
func TestTenSecondRecordCarriesValue(t *testing.T) {
	const fs = 10240.0
	v := synthChan{tones: []tone{{1, 230, 0}}, noise: 0.1}
	recs, _ := runPipeline(t, Config{Setup: oneChannel(t), SampleRate: fs, NominalHz: 50}, newSynth(fs, constFreq(49.93), 20.5, v))
	n := 0
	for _, r := range recs {
		if !r.HasFreq10s {
			continue
		}
		n++
		end := r.Start.Add(time.Duration(r.DurationS * 1e9))
		b := end.Truncate(10 * time.Second)
		if end.Sub(b) > 2*time.Duration(0.2*1e9) {
			t.Errorf("10 s value on the window ending %v, more than two windows past the boundary %v", end, b)
		}
	}
	if n != 2 {
		t.Errorf("%d 10 s values in 20.5 s, want 2", n)
	}
}

// TestGentleRampSynchronized: a supply steady at 49.2 Hz that ramps at
// 0.5 Hz/s for 3 s and then stays at 50.7 Hz keeps every window after
// acquisition synchronized, the first and last of the ramp included, and
// each window's frequency equals the cycles it holds divided by its duration
// (closed form of the analytic phase) within the project's bound.
func TestGentleRampSynchronized(t *testing.T) {
	const fs, f0, a, t0, t1 = 10240.0, 49.2, 0.5, 2.0, 5.0
	freq := func(t float64) float64 { return f0 + a*(min(max(t, t0), t1)-t0) }
	cyc := func(t float64) float64 { // ∫ freq
		u := min(max(t, t0), t1) - t0
		return f0*t + a*u*u/2 + a*(t1-t0)*max(0, t-t1)
	}
	v := synthChan{tones: []tone{{1, 230, 0}, {3, 6.9, 20}, {5, 11.5, 30}}, noise: 0.2}
	recs, _ := runPipeline(t, Config{Setup: oneChannel(t), SampleRate: fs, NominalHz: 50}, newSynth(fs, freq, 7, v))
	worst := 0.0
	for k, r := range recs[acquireWindows:] {
		st := float64(r.Start.UnixNano()) / 1e9
		end := st + r.DurationS
		if r.Flags&metrics.FlagNoLock != 0 {
			t.Errorf("window %d at %.3f s: no_lock on a 0.5 Hz/s ramp", k+acquireWindows, st)
			continue
		}
		want := (cyc(end) - cyc(st)) / (end - st)
		d := math.Abs(r.FreqHz - want)
		worst = max(worst, d)
		if !(d <= trackTolHz) {
			t.Errorf("window at %.3f s: freq_hz %.5f, mean over the window %.5f (project bound %g)", st, r.FreqHz, want, trackTolHz)
		}
	}
	t.Logf("worst window frequency error on the ramp %.2g Hz", worst)
}

// TestCycleAndLockState: the cycle length and lock state the pipeline
// exposes follow a steady 49.5 Hz supply (closed form: fs/f samples per
// cycle) and drop to nominal and false after the signal is lost.
func TestCycleAndLockState(t *testing.T) {
	const fs = 10240.0
	gain := func(t float64) float64 {
		if t >= 1.5 {
			return 0.02 // under lock_min_pct
		}
		return 1
	}
	v := synthChan{tones: []tone{{1, 230, 0}}, noise: 0.1, gain: gain}
	p, err := New(Config{Setup: oneChannel(t), SampleRate: fs, NominalHz: 50})
	if err != nil {
		t.Fatal(err)
	}
	var at1 struct {
		cyc  float64
		lock bool
	}
	err = p.Run(t.Context(), newSynth(fs, constFreq(49.5), 2.2, v), func(r *metrics.Record) error {
		if st := r.Start.Sub(time.Unix(0, 0)).Seconds(); st > 1 && st < 1.2 {
			at1.cyc, at1.lock = p.CycleSamples(), p.Locked()
		}
		return nil
	})
	if err != nil {
		t.Fatal(err)
	}
	// cycTol: a window's frequency within the 2 mHz bound is fs/f within
	// 8.4e-3 samples (closed form fs·Δf/f²)
	const cycTol = 0.01
	if want := fs / 49.5; !at1.lock || math.Abs(at1.cyc-want) > cycTol {
		t.Errorf("locked at 49.5 Hz: cycle %v samples, lock %v; want %v, true", at1.cyc, at1.lock, want)
	}
	if p.Locked() || p.CycleSamples() != fs/50 {
		t.Errorf("after the loss: cycle %v, lock %v; want %v (nominal), false", p.CycleSamples(), p.Locked(), fs/50)
	}
}
