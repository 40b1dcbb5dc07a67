package stream

import (
	"context"
	"errors"
	"io"
	"math"
	"testing"
	"time"

	"github.com/gridloupe/gridloupe/metrics"
)

// holeSource delivers interleaved frames and reports the frames in
// [from, from+n) of each hole as missing (*Gap), like a link that lost
// them: the samples after a hole are the true continuation of the signal.
type holeSource struct {
	data  []float64
	nch   int
	pos   int // next frame
	holes [][2]int
	// withFrames returns the frames before a hole together with the Gap
	// (io.Reader's rule); otherwise the Gap comes alone on the next call.
	withFrames bool
}

func (h *holeSource) ReadFrames(dst []float64) (int, error) {
	total := len(h.data) / h.nch
	if h.pos >= total {
		return 0, io.EOF
	}
	room := len(dst) / h.nch
	for _, hl := range h.holes {
		if h.pos == hl[0] {
			h.pos = min(total, hl[0]+hl[1])
			return 0, &Gap{Missing: uint64(h.pos - hl[0])}
		}
		if h.pos < hl[0] && h.pos+room >= hl[0] {
			n := hl[0] - h.pos
			copy(dst, h.data[h.pos*h.nch:hl[0]*h.nch])
			h.pos = hl[0]
			if h.withFrames {
				h.pos = min(total, hl[0]+hl[1])
				return n, &Gap{Missing: uint64(h.pos - hl[0])}
			}
			return n, nil
		}
	}
	n := min(room, total-h.pos)
	copy(dst, h.data[h.pos*h.nch:(h.pos+n)*h.nch])
	h.pos += n
	return n, nil
}

// TestGapWindows: a source that loses samples (DESIGN "Sources": a jump of
// the sample index, a lost frame, a reconnect) gets every window holding
// missing samples flagged gap with null values; time stays base + index/fs
// across the hole; the tracker re-acquires; no window without the flag
// holds a missing sample.
func TestGapWindows(t *testing.T) {
	const (
		fs = 10240.0
		f  = 50.02 // src: synthesized, an awkward off-nominal frequency
		// rmsTol: IEC 61000-4-30 class A ±0.1 % of the declared 230 V (from memory).
		rmsTol = 0.001 * 230
		// timeTol: record starts are printed to the microsecond; the
		// clock is exact, so a nanosecond bound catches any drift.
		timeTol = time.Nanosecond
	)
	cases := []struct {
		name       string
		holes      [][2]int // frames: start, length
		withFrames bool
	}{
		{name: "short hole inside one window", holes: [][2]int{{5000, 300}}},
		{name: "hole over several windows, gap with frames", holes: [][2]int{{7000, 13000}}, withFrames: true},
		{name: "one-sample hole", holes: [][2]int{{9001, 1}}},
		{name: "two holes", holes: [][2]int{{4100, 2047}, {20000, 5}}, withFrames: true},
	}
	data, ch := sixChannels(fs, 4, f)
	s := setupOf(t, metrics.Wye, 230, 160, true, nil, ch...)
	base := time.Date(2026, 3, 1, 10, 0, 0, 0, time.UTC)
	for _, tc := range cases {
		t.Run(tc.name, func(t *testing.T) {
			src := &holeSource{data: data, nch: 6, holes: tc.holes, withFrames: tc.withFrames}
			p, err := New(Config{Setup: s, SampleRate: fs, NominalHz: 50, Base: base, BlockFrames: 700})
			if err != nil {
				t.Fatal(err)
			}
			var recs []metrics.Record
			iv := NewIntervals(s, metrics.Int3s)
			var aggs []metrics.Record
			err = p.Run(context.Background(), src, func(r *metrics.Record) error {
				recs = append(recs, cloneRecord(r))
				return iv.Add(r, func(a *metrics.Record) error {
					if a.Interval == metrics.Int3s {
						aggs = append(aggs, cloneRecord(a))
					}
					return nil
				})
			})
			if err != nil {
				t.Fatal(err)
			}
			missing := 0
			for _, h := range tc.holes {
				missing += h[1]
			}
			if p.Missing() != uint64(missing) {
				t.Errorf("Missing() = %d, want %d", p.Missing(), missing)
			}
			idx := 0 // sample index of the record's first sample, counted from durations
			sinceGap := 1 << 30
			for i, r := range recs {
				n := int(math.Round(r.DurationS * fs))
				if want := base.Add(time.Duration(float64(idx) / fs * 1e9)); absDur(r.Start.Sub(want)) > timeTol+time.Nanosecond {
					t.Fatalf("window %d starts %v, want base + %d/fs = %v", i, r.Start, idx, want)
				}
				over := 0
				for _, h := range tc.holes {
					lo, hi := max(idx, h[0]), min(idx+n, h[0]+h[1])
					over += max(0, hi-lo)
				}
				gap := r.Flags&metrics.FlagGap != 0
				switch {
				case over > 0 && !gap:
					t.Fatalf("window %d holds %d missing samples but is not flagged gap (flags %v)", i, over, r.Flags.Names())
				case over == 0 && gap:
					t.Fatalf("window %d holds no missing sample but is flagged gap", i)
				case gap:
					sinceGap = 0
					if r.Samples != uint64(n-over) {
						t.Errorf("window %d: samples %d, want %d received of %d", i, r.Samples, n-over, n)
					}
					if !metrics.IsNull(r.Channels[0].RMS) || !metrics.IsNull(r.Total.P) || !metrics.IsNull(r.Phases[0].PF) {
						t.Errorf("window %d: gap window values not null: rms %v p %v", i, r.Channels[0].RMS, r.Total.P)
					}
					if r.Flags&metrics.FlagBadSample != 0 {
						t.Errorf("window %d: gap window flagged bad_sample without a NaN input", i)
					}
				default:
					sinceGap++
					if r.Samples != uint64(n) {
						t.Errorf("window %d: samples %d, want %d", i, r.Samples, n)
					}
					if i >= acquireWindows && sinceGap > acquireWindows {
						if r.Flags&metrics.FlagNoLock != 0 || math.Abs(r.FreqHz-f) > freqTol {
							t.Errorf("window %d (%d after the gap): freq %v flags %v, want %v Hz locked", i, sinceGap, r.FreqHz, r.Flags.Names(), f)
						}
						if math.Abs(r.Channels[0].RMS-230) > rmsTol {
							t.Errorf("window %d: va rms %v, want 230 ± %v", i, r.Channels[0].RMS, rmsTol)
						}
					}
				}
				idx += n
			}
			if total := len(data) / 6; idx+p.Leftover() != total {
				t.Errorf("windows cover %d samples + %d left over, want all %d of the time line", idx, p.Leftover(), total)
			}
			// 3 s aggregates: gap carried, samples only of whole windows
			j := 0
			for _, a := range aggs {
				var want uint64
				var gap bool
				for ; j < len(recs) && recs[j].Start.Before(a.Start.Add(time.Duration(a.DurationS*1e9)-time.Microsecond)); j++ {
					if recs[j].Flags&metrics.FlagGap != 0 {
						gap = true
					} else {
						want += recs[j].Samples
					}
				}
				if gap != (a.Flags&metrics.FlagGap != 0) || a.Samples != want {
					t.Errorf("3 s at %v: gap %v samples %d, want gap %v and %d samples of whole windows", a.Start, a.Flags&metrics.FlagGap != 0, a.Samples, gap, want)
				}
			}
		})
	}
}

// TestGapKeepsBadSample: a window that holds a NaN input sample and a hole
// carries both flags.
func TestGapKeepsBadSample(t *testing.T) {
	const fs = 10240.0
	data, ch := sixChannels(fs, 1, 50)
	data[100*6+3] = math.NaN()
	s := setupOf(t, metrics.Wye, 230, 160, true, nil, ch...)
	src := &holeSource{data: data, nch: 6, holes: [][2]int{{500, 10}}}
	recs, _ := runPipeline(t, Config{Setup: s, SampleRate: fs, NominalHz: 50}, src)
	want := metrics.FlagGap | metrics.FlagBadSample
	if len(recs) == 0 || recs[0].Flags&want != want {
		t.Fatalf("first window flags %v, want gap and bad_sample", recs[0].Flags.Names())
	}
}

// TestGapEmitError: an emit error inside a hole stops the run.
func TestGapEmitError(t *testing.T) {
	const fs = 10240.0
	data, ch := sixChannels(fs, 2, 50)
	s := setupOf(t, metrics.Wye, 230, 160, true, nil, ch...)
	p, err := New(Config{Setup: s, SampleRate: fs, NominalHz: 50})
	if err != nil {
		t.Fatal(err)
	}
	stop := errors.New("stop")
	err = p.Run(context.Background(), &holeSource{data: data, nch: 6, holes: [][2]int{{10, 15000}}}, func(r *metrics.Record) error {
		if r.Flags&metrics.FlagGap != 0 {
			return stop
		}
		return nil
	})
	if !errors.Is(err, stop) {
		t.Fatalf("Run = %v, want the emit error", err)
	}
}

func absDur(d time.Duration) time.Duration {
	if d < 0 {
		return -d
	}
	return d
}
