package stream

import (
	"context"
	"errors"
	"io"
	"math"
	"testing"

	"github.com/gridloupe/gridloupe/metrics"
)

// misbehaving wraps a source and bends io.Reader's rules as far as they
// allow (one frame per call, an error together with data mid-block), or
// breaks them (more frames than the buffer holds).
type misbehaving struct {
	src     FrameReader
	nch     int
	perCall int    // frames per call at most; 0 = as many as fit
	failAt  uint64 // return failErr together with the frames that reach this count; 0 = never
	failErr error
	over    bool // claim one frame more than dst holds
	n       uint64
	ended   bool
}

func (m *misbehaving) ReadFrames(dst []float64) (int, error) {
	if m.ended {
		return 0, io.EOF
	}
	if m.over {
		return len(dst)/m.nch + 1, nil
	}
	want := len(dst) / m.nch
	if m.perCall > 0 && want > m.perCall {
		want = m.perCall
	}
	if m.failAt > 0 && m.n+uint64(want) > m.failAt {
		want = int(m.failAt - m.n)
	}
	n, err := m.src.ReadFrames(dst[:want*m.nch])
	m.n += uint64(n)
	if m.failAt > 0 && m.n == m.failAt {
		m.ended = true
		return n, m.failErr
	}
	return n, err
}

// TestMisbehavingSources: the records do not depend on how the source
// hands its frames over, and an error from the source ends Run wrapped in
// ErrSource after the frames that came with it were measured.
func TestMisbehavingSources(t *testing.T) {
	t.Parallel()
	const (
		fs      = 6400.0
		seconds = 1.5
		f       = 50.02 // src: an awkward off-nominal frequency, common practice, no source
		// sameTol: the same samples in the same windows give the same
		// floating-point sums regardless of block boundaries, up to the
		// reassociation of the frequency estimate (common practice, no source).
		sameTol = 1e-9
	)
	v := synthChan{tones: []tone{{1, 230, 0}, {5, 11.5, 30}}}
	s := setupOf(t, metrics.SinglePhase, 230, 0, false, []int{1, 5},
		metrics.Channel{Name: "v", Kind: metrics.Voltage, Phase: 'a'})
	cfg := Config{Setup: s, SampleRate: fs, NominalHz: 50, BlockFrames: 256}
	ref, _ := runPipeline(t, cfg, newSynth(fs, constFreq(f), seconds, v))
	if len(ref) < 5 {
		t.Fatalf("reference run: %d windows", len(ref))
	}
	same := func(t *testing.T, got []metrics.Record, n int) {
		t.Helper()
		if len(got) != n {
			t.Fatalf("%d windows, want %d (the well-behaved source's)", len(got), n)
		}
		for i := range n {
			g, w := &got[i], &ref[i]
			if !g.Start.Equal(w.Start) || g.Samples != w.Samples {
				t.Fatalf("window %d: start %v, %d samples; want %v, %d", i, g.Start, g.Samples, w.Start, w.Samples)
			}
			if d := math.Abs(g.Channels[0].RMS - w.Channels[0].RMS); d > sameTol*w.Channels[0].RMS {
				t.Errorf("window %d: rms %v, want %v", i, g.Channels[0].RMS, w.Channels[0].RMS)
			}
		}
	}
	t.Run("one frame per call", func(t *testing.T) {
		t.Parallel()
		got, _ := runPipeline(t, cfg, &misbehaving{src: newSynth(fs, constFreq(f), seconds, v), nch: 1, perCall: 1})
		same(t, got, len(ref))
	})
	t.Run("odd block lengths", func(t *testing.T) {
		t.Parallel()
		got, _ := runPipeline(t, cfg, &misbehaving{src: newSynth(fs, constFreq(f), seconds, v), nch: 1, perCall: 97})
		same(t, got, len(ref))
	})
	t.Run("data and io.EOF together", func(t *testing.T) {
		t.Parallel()
		got, _ := runPipeline(t, cfg, &eofWithData{src: newSynth(fs, constFreq(f), seconds, v), total: uint64(math.Round(seconds * fs))})
		same(t, got, len(ref))
	})
	t.Run("error mid-block", func(t *testing.T) {
		t.Parallel()
		// fail with the frames that complete the fourth window plus a few
		var end uint64
		for _, r := range ref[:4] {
			end += r.Samples
		}
		cause := errors.New("adc: FIFO overrun")
		p, err := New(cfg)
		if err != nil {
			t.Fatal(err)
		}
		var got []metrics.Record
		runErr := p.Run(context.Background(), &misbehaving{src: newSynth(fs, constFreq(f), seconds, v), nch: 1, perCall: 200,
			failAt: end + 7, failErr: cause}, func(r *metrics.Record) error {
			got = append(got, cloneRecord(r))
			return nil
		})
		// src: Pipeline.Run doc and README "The gateway", bad conditions: a failing source ends the run with its reason
		if !errors.Is(runErr, ErrSource) || !errors.Is(runErr, cause) {
			t.Fatalf("Run: %v, want ErrSource wrapping the source's error", runErr)
		}
		// src: io.Reader's rule (frames returned with an error are data): the four windows the frames completed are emitted
		same(t, got, 4)
	})
	t.Run("more frames than the buffer", func(t *testing.T) {
		t.Parallel()
		p, err := New(cfg)
		if err != nil {
			t.Fatal(err)
		}
		runErr := p.Run(context.Background(), &misbehaving{nch: 1, over: true}, func(*metrics.Record) error { return nil })
		// src: FrameReader doc: at most len(dst)/channels frames; common practice, no source
		if !errors.Is(runErr, ErrSource) {
			t.Fatalf("Run: %v, want ErrSource for an impossible frame count", runErr)
		}
	})
}

// eofWithData returns the last frames of src together with io.EOF, as
// io.Reader allows.
type eofWithData struct {
	src   FrameReader
	total uint64
	n     uint64
}

func (e *eofWithData) ReadFrames(dst []float64) (int, error) {
	if e.n >= e.total {
		return 0, io.EOF
	}
	n, err := e.src.ReadFrames(dst)
	e.n += uint64(n)
	if e.n >= e.total && err == nil {
		err = io.EOF
	}
	return n, err
}

// TestClockUnsynced: a window gets clock_unsynced exactly when Unsynced
// says so at its end, and never without an Unsynced function.
func TestClockUnsynced(t *testing.T) {
	t.Parallel()
	const fs = 6400.0
	v := synthChan{tones: []tone{{1, 230, 0}}}
	s := setupOf(t, metrics.SinglePhase, 230, 0, false, []int{1},
		metrics.Channel{Name: "v", Kind: metrics.Voltage, Phase: 'a'})
	calls := 0
	unsynced := func() bool { calls++; return calls > 3 } // synchronised for the first three windows
	recs, _ := runPipeline(t, Config{Setup: s, SampleRate: fs, NominalHz: 50, Unsynced: unsynced},
		newSynth(fs, constFreq(50), 1.5, v))
	if len(recs) < 6 {
		t.Fatalf("%d windows", len(recs))
	}
	for i, r := range recs {
		// src: README flags table, clock_unsynced: the system clock was not synchronised
		if want := i >= 3; (r.Flags&metrics.FlagClockUnsynced != 0) != want {
			t.Errorf("window %d: clock_unsynced %v, want %v", i, !want, want)
		}
	}
	recs, _ = runPipeline(t, Config{Setup: s, SampleRate: fs, NominalHz: 50}, newSynth(fs, constFreq(50), 1.5, v))
	for i, r := range recs {
		if r.Flags&metrics.FlagClockUnsynced != 0 {
			t.Errorf("window %d: clock_unsynced without an Unsynced function (nil = synced)", i)
		}
	}
}

// TestCrestFactorOfSine: a sine at an awkward frequency reads √2 (closed
// form) within the sampled-peak error, 1 − cos(π·f/fs) = 3.0e-4 at
// 50.02 Hz and 6400 Hz, on every locked window.
func TestCrestFactorOfSine(t *testing.T) {
	t.Parallel()
	const fs, f = 6400.0, 50.02
	tol := math.Sqrt2 * (1 - math.Cos(math.Pi*f/fs)) * 1.01 // the bound, plus 1 % for noise-free rounding
	v := synthChan{tones: []tone{{1, 230, 17}}}
	s := setupOf(t, metrics.SinglePhase, 230, 0, false, []int{1},
		metrics.Channel{Name: "v", Kind: metrics.Voltage, Phase: 'a'})
	recs, _ := runPipeline(t, Config{Setup: s, SampleRate: fs, NominalHz: 50}, newSynth(fs, constFreq(f), 1.5, v))
	for i, r := range recs {
		if got := r.Channels[0].CrestFactor; math.Abs(got-math.Sqrt2) > tol {
			t.Errorf("window %d: crest_factor %.6f, want √2 ± %.2g (closed form, sampled peak)", i, got, tol)
		}
	}
}

// TestSumsIndependentOfReads: the window's sums (Σx, Σx², Σv·i) split their
// samples by index since the start, not by position in a read, so the RMS,
// DC and P of each window are the same bit for bit however the source cuts
// its reads (Pipeline.odd's doc). Odd read lengths put segments on odd
// indices.
func TestSumsIndependentOfReads(t *testing.T) {
	t.Parallel()
	const fs, seconds, f = 6400.0, 1.0, 50.02 // src: an awkward off-nominal frequency, common practice, no source
	chans := []synthChan{{tones: []tone{{1, 230, 0}, {5, 11.5, 30}}}, {tones: []tone{{1, 40, -25}, {7, 6, 80}}}}
	s := setupOf(t, metrics.SinglePhase, 230, 0, false, []int{1, 5, 7},
		metrics.Channel{Name: "v", Kind: metrics.Voltage, Phase: 'a'}, metrics.Channel{Name: "i", Kind: metrics.Current, Phase: 'a'})
	cfg := Config{Setup: s, SampleRate: fs, NominalHz: 50, BlockFrames: 256}
	ref, _ := runPipeline(t, cfg, newSynth(fs, constFreq(f), seconds, chans...))
	if len(ref) < 5 || len(ref[0].Phases) != 1 {
		t.Fatalf("reference run: %d windows", len(ref))
	}
	for _, per := range []int{1, 97, 255} {
		got, _ := runPipeline(t, cfg, &misbehaving{src: newSynth(fs, constFreq(f), seconds, chans...), nch: 2, perCall: per})
		if len(got) != len(ref) {
			t.Fatalf("reads of %d frames: %d windows, want %d", per, len(got), len(ref))
		}
		for i := range ref {
			g, w := &got[i], &ref[i]
			// src: Pipeline.odd's doc: the same result however a source cuts its reads
			for c := range w.Channels {
				if math.Float64bits(g.Channels[c].RMS) != math.Float64bits(w.Channels[c].RMS) ||
					math.Float64bits(g.Channels[c].DC) != math.Float64bits(w.Channels[c].DC) {
					t.Errorf("reads of %d frames, window %d, channel %d: rms %v dc %v, want %v %v", per, i, c,
						g.Channels[c].RMS, g.Channels[c].DC, w.Channels[c].RMS, w.Channels[c].DC)
				}
			}
			if math.Float64bits(g.Phases[0].P) != math.Float64bits(w.Phases[0].P) {
				t.Errorf("reads of %d frames, window %d: p %v, want %v", per, i, g.Phases[0].P, w.Phases[0].P)
			}
		}
	}
}
