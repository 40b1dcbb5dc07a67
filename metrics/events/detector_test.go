package events

import (
	"math"
	"slices"
	"testing"
)

// Class A bounds (IEC 61000-4-30 clause 5.4, from memory, unconfirmed; see
// REFERENCE 2.4): residual or maximum voltage within ±0.2 % of Udin,
// duration within ±1 cycle. The start bound of half a cycle is the
// refresh period of Urms(1/2) (IEC 61000-4-30 definitions): no method on
// that grid can place the start closer in general.
const (
	classAExtremePct = 0.2
	classADurCycles  = 1.0
	startCycles      = 0.5
)

// Project bounds, about twice the worst case measured over these cases
// (shown by -v: extreme 0.0012 % of Udin, start 0.19 cycles), far inside
// the class A figures.
const (
	projExtremePct  = 0.003
	projStartCycles = 0.4
)

func TestEvents(t *testing.T) {
	const (
		fs   = 10240.0
		f    = 50.02 // awkward: 204.7 samples per cycle
		udin = 230.0
	)
	cyc := 1 / f
	type want struct {
		kind     Kind
		t0, t1   float64 // true start and end of the disturbance, s
		channels uint64
		worst    int
		extreme  float64
	}
	cases := []struct {
		name  string
		nv    int
		secs  float64
		steps []step
		lock  func(t float64) bool
		want  []want
		src   string
	}{
		{name: "single-phase dip to 60.1 %", nv: 1, secs: 1,
			steps: []step{{0, 0.41373, 0.51373, 138.3}},
			want:  []want{{Dip, 0.41373, 0.51373, 1, 0, 138.3}},
			src:   "closed form: a sine whose RMS steps from 230 V to 138.3 V for 100 ms; DESIGN 'Voltage events' record example"},
		{name: "polyphase dip, b deeper and later, c untouched", nv: 3, secs: 1.2,
			steps: []step{{0, 0.3011, 0.4511, 161}, {1, 0.3161, 0.6087, 115}},
			want:  []want{{Dip, 0.3011, 0.6087, 0b011, 1, 115}},
			src:   "closed form; polyphase rule (REFERENCE 2.4, from memory): first channel down opens, last channel back closes"},
		{name: "swell on phase b to 120 %", nv: 3, secs: 1,
			steps: []step{{1, 0.2503, 0.4903, 276}},
			want:  []want{{Swell, 0.2503, 0.4903, 0b010, 1, 276}},
			src:   "closed form; swell is the image of a dip, characterised by its maximum (REFERENCE 2.4, from memory)"},
		{name: "three-phase interruption to 1 %, tracker unlocked", nv: 3, secs: 1.5,
			steps: []step{{0, 0.40017, 0.90017, 2.3}, {1, 0.40017, 0.90017, 2.1}, {2, 0.40017, 0.90017, 2.5}},
			lock:  func(t float64) bool { return t < 0.40017 || t > 1.1 },
			want:  []want{{Interruption, 0.40017, 0.90017, 0b111, 1, 2.1}},
			src:   "closed form; interruption inside a dip reported as the interruption (IEC 61000-4-30, from memory); nominal cycles while unlocked"},
		{name: "recovery to 91 % stays inside the 2 % hysteresis", nv: 1, secs: 1,
			steps: []step{{0, 0.30071, 0.40071, 184}, {0, 0.40071, 0.60071, 209.3}},
			want:  []want{{Dip, 0.30071, 0.60071, 1, 0, 184}},
			src:   "closed form; a dip ends at threshold + hysteresis (REFERENCE 2.4, from memory): 91 % < 92 %"},
		{name: "back-to-back dips 80 ms apart", nv: 3, secs: 1.2,
			steps: []step{{2, 0.2207, 0.3007, 184}, {2, 0.3807, 0.4607, 149.5}},
			want:  []want{{Dip, 0.2207, 0.3007, 0b100, 2, 184}, {Dip, 0.3807, 0.4607, 0b100, 2, 149.5}},
			src:   "closed form: two rectangular dips on phase c, 80 % then 65 % of 230 V"},
	}
	var worstStart, worstDur, worstExt float64
	for _, tc := range cases {
		t.Run(tc.name, func(t *testing.T) {
			d := newDet(t, fs, f, tc.nv, 317, nil)
			sig := signal(fs, f, udin, tc.secs, tc.nv, tc.steps)
			got := ended(feed(d, sig, 317, f, tc.lock, true))
			if len(got) != len(tc.want) {
				t.Fatalf("%d events %+v, want %d (src: %s)", len(got), got, len(tc.want), tc.src)
			}
			for i, w := range tc.want {
				e := got[i]
				if e.Kind != w.kind || e.Mask != w.channels || e.Worst != w.worst || e.Unfinished {
					t.Errorf("event %d: %v mask %b worst %d unfinished %v, want %v %b %d (src: %s)",
						i, e.Kind, e.Mask, e.Worst, e.Unfinished, w.kind, w.channels, w.worst, tc.src)
				}
				start := float64(e.Start) / fs
				dur := float64(e.Duration()) / fs
				ds, dd := math.Abs(start-w.t0)/cyc, math.Abs(dur-(w.t1-w.t0))/cyc
				de := math.Abs(e.ExtremeV-w.extreme) / udin * 100
				worstStart, worstDur, worstExt = max(worstStart, ds), max(worstDur, dd), max(worstExt, de)
				t.Logf("event %d: start off by %.3f cycles, duration by %.3f cycles, extreme by %.4f %% of Udin", i, ds, dd, de)
				if ds > startCycles {
					t.Errorf("event %d: start %.5f s, want %.5f s within half a cycle (Urms(1/2) refresh, IEC 61000-4-30 definitions; src: %s)", i, start, w.t0, tc.src)
				}
				if dd > classADurCycles {
					t.Errorf("event %d: duration %.5f s, want %.5f s ± 1 cycle (IEC 61000-4-30 class A, from memory; src: %s)", i, dur, w.t1-w.t0, tc.src)
				}
				if de > classAExtremePct {
					t.Errorf("event %d: extreme %.3f V, want %.3f V ± 0.2 %% of Udin (IEC 61000-4-30 class A, from memory; src: %s)", i, e.ExtremeV, w.extreme, tc.src)
				}
				if ds > projStartCycles {
					t.Errorf("event %d: start off by %.3f cycles, over the project bound %.1f", i, ds, projStartCycles)
				}
				if de > projExtremePct {
					t.Errorf("event %d: extreme %.3f V off by %.4f %% of Udin, over the project bound %.2f %%", i, e.ExtremeV, de, projExtremePct)
				}
			}
		})
	}
	t.Logf("worst: start %.3f cycles, duration %.3f cycles, extreme %.4f %% of Udin", worstStart, worstDur, worstExt)
}

// TestUrmsValues checks the values Urms(1/2) holds around an amplitude step
// on a grid where a half cycle is exactly 128 samples (12.8 kHz, 50 Hz).
func TestUrmsValues(t *testing.T) {
	const fs, f, udin, low = 12800.0, 50.0, 230.0, 138.3
	// the step falls on the 40th half-cycle edge (0.4 s)
	d := newDet(t, fs, f, 1, 128, nil)
	sig := signal(fs, f, udin, 0.6, 1, []step{{0, 0.4, 1, low}})
	// Urms over one cycle = sqrt of the mean of the two half cycles' mean
	// squares; a half cycle of whole samples holds A²·n/2 in its sum of
	// sin² (closed form: Σ sin²(θ+kπ/n), k<n, = n/2).
	mixed := math.Sqrt((udin*udin + low*low) / 2)
	const tol = 1e-9 // relative; float64 round-off over 256 squares, common practice, no source
	var u [1]float64
	for h := 1; h <= 60; h++ {
		d.Write(sig, (h-1)*128, 128)
		for _, ok := d.Next(); ok; _, ok = d.Next() {
		}
		d.Urms(u[:])
		var want float64
		switch {
		case h < 2:
			want = math.NaN() // no full cycle yet
		case h <= 40:
			want = udin
		case h == 41:
			want = mixed
		default:
			want = low
		}
		if math.IsNaN(want) != math.IsNaN(u[0]) || (!math.IsNaN(want) && math.Abs(u[0]-want) > tol*want) {
			t.Fatalf("after half cycle %d: Urms(1/2) = %v, want %v (closed form, see comment)", h, u[0], want)
		}
	}
}

func TestUnfinishedAtClose(t *testing.T) {
	const fs, f = 10240.0, 49.97
	d := newDet(t, fs, f, 3, 512, nil)
	sig := signal(fs, f, 230, 0.8, 3, []step{{1, 0.5, 9, 100}})
	notes := feed(d, sig, 512, f, nil, true)
	ev := ended(notes)
	if len(ev) != 1 || !ev[0].Unfinished || ev[0].End != uint64(len(sig[0])) || ev[0].Kind != Dip {
		t.Fatalf("events %+v, want one unfinished dip ending at the last sample (an event open at the end is closed and flagged)", ev)
	}
	if notes[0].Kind != Captured || notes[0].Event.CaptureStart+uint64(notes[0].Event.CaptureFrames) != uint64(len(sig[0])) {
		t.Fatalf("first note %+v, want the capture running to the last sample", notes[0])
	}
}

func TestCaptureBounds(t *testing.T) {
	const fs, f, udin = 10240.0, 50.0, 230.0
	cyc := fs / f
	t.Run("pre and post cycles", func(t *testing.T) {
		d := newDet(t, fs, f, 3, 400, nil)
		sig := signal(fs, f, udin, 2, 3, []step{{0, 0.5, 0.6, 150}})
		var notes []Note
		for off := 0; off < len(sig[0]); off += 400 {
			d.Write(sig, off, min(400, len(sig[0])-off))
			for n, ok := d.Next(); ok; n, ok = d.Next() {
				notes = append(notes, n)
				if n.Kind != Captured {
					continue
				}
				w := d.Waveform(&n.Event)
				for i := range w.Frames() {
					for c := range w.Channels() {
						if x := float32(sig[c][n.Event.CaptureStart+uint64(i)]); w.At(i, c) != x {
							t.Fatalf("frame %d channel %d: %v, want the input sample %v", i, c, w.At(i, c), x)
						}
					}
				}
			}
		}
		if len(notes) != 2 || notes[0].Kind != Captured || notes[1].Kind != Ended {
			t.Fatalf("notes %+v, want Captured then Ended", notes)
		}
		e := notes[0].Event
		wantStart := e.Start - uint64(10*cyc)
		wantFrames := int(notes[1].Event.End + uint64(20*cyc) - wantStart)
		if e.CaptureStart != wantStart || e.CaptureFrames != wantFrames || e.CaptureCut {
			t.Fatalf("capture [%d, +%d) cut %v, want [%d, +%d): pre_cycles 10 and post_cycles 20 (DESIGN 'Voltage events' defaults)",
				e.CaptureStart, e.CaptureFrames, e.CaptureCut, wantStart, wantFrames)
		}
	})
	t.Run("cut at max_capture_s, ring constant", func(t *testing.T) {
		d := newDet(t, fs, f, 3, 512, func(c *Config) { c.MaxCaptureS = 0.5 })
		ring := d.RingBytes()
		var steps []step
		for i := range 20 { // twenty dips, one of them long
			t0 := 0.3 + float64(i)*0.4
			l := 0.1
			if i == 3 {
				l = 0.35
			}
			steps = append(steps, step{i % 3, t0, t0 + l, 170})
		}
		sig := signal(fs, f, udin, 9, 3, steps)
		d.SetFrequency(f, true)
		notes := feed(d, sig, 512, f, nil, true)
		if n := len(ended(notes)); n != 20 {
			t.Fatalf("%d events, want 20", n)
		}
		for _, n := range notes {
			if n.Event.CaptureFrames > int(0.5*fs) {
				t.Fatalf("capture of %d frames, over max_capture_s 0.5 s = %d", n.Event.CaptureFrames, int(0.5*fs))
			}
		}
		// float32 frames of 4 channels, max_capture_s plus one block
		if want := 4 * 4 * (int(0.5*fs) + 512); d.RingBytes() != ring || ring != want {
			t.Fatalf("ring %d bytes (then %d), want %d, constant", ring, d.RingBytes(), want)
		}
	})
}

// TestNoCapture: without the ring the detector reports the same notes (the
// same events, capture bounds and cut flags) through dips, a long dip cut
// at max_capture_s, a swell and a gap; it holds no ring and its waveforms
// have no frames. src: the Config.NoCapture contract.
func TestNoCapture(t *testing.T) {
	const fs, f, udin = 10240.0, 50.0, 230.0
	steps := []step{{0, 0.3, 0.4, 170}, {1, 0.9, 1.6, 100}, {2, 2.1, 2.3, 270}, {0, 3.2, 3.3, 150}}
	sig := signal(fs, f, udin, 4, 3, steps)
	run := func(noCapture bool) ([]Note, *Detector) {
		d := newDet(t, fs, f, 3, 512, func(c *Config) { c.MaxCaptureS, c.NoCapture = 0.5, noCapture })
		var notes []Note
		drain := func() {
			for n, ok := d.Next(); ok; n, ok = d.Next() {
				notes = append(notes, n)
				if w := d.Waveform(&n.Event); noCapture && (w.Frames() != 0 || w.Channels() != 4) {
					t.Errorf("NoCapture waveform: %d frames of %d channels, want 0 of 4", w.Frames(), w.Channels())
				}
			}
		}
		for off := 0; off < len(sig[0]); off += 512 {
			if off == 512*50 { // a 300-sample gap inside the second dip
				d.Skip(300)
				drain()
			}
			d.Write(sig, off, min(512, len(sig[0])-off))
			drain()
		}
		d.Close()
		drain()
		return notes, d
	}
	want, full := run(false)
	got, bare := run(true)
	if len(ended(want)) != 4 {
		t.Fatalf("%d events with the ring, want 4 (the steps)", len(ended(want)))
	}
	if !slices.Equal(got, want) {
		t.Errorf("notes without the ring differ:\n got %+v\nwant %+v", got, want)
	}
	if bare.RingBytes() != 0 || full.RingBytes() == 0 {
		t.Errorf("ring %d bytes with NoCapture (want 0), %d without", bare.RingBytes(), full.RingBytes())
	}
}
