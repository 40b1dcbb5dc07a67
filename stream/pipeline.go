package stream

import (
	"context"
	"errors"
	"fmt"
	"io"
	"log/slog"
	"math"
	"time"

	"github.com/gridloupe/gridloupe/goertzel"
	"github.com/gridloupe/gridloupe/metrics"
	"github.com/gridloupe/gridloupe/metrics/events"
)

// Cal is one channel's calibration: engineering value = raw·Scale + Offset.
type Cal struct {
	Scale  float64 // 0 means 1
	Offset float64
}

// Config configures a Pipeline. Zero values are documented per field.
type Config struct {
	Setup      *metrics.Setup // from metrics.NewSetup; required
	Cal        []Cal          // per Setup.Channels; nil = raw values are engineering values
	SampleRate float64        // Hz; required
	NominalHz  float64        // 50 or 60; required
	// LockMinRMS is the reference fundamental RMS (engineering units) below
	// which the tracker reports no lock. 0 means 10 % of Setup.NominalV.
	LockMinRMS float64
	// Base is the wall time of sample 0. Zero means 1970-01-01T00:00:00Z,
	// so replay output is deterministic.
	Base time.Time
	// BlockFrames is the number of frames read per call; 0 means 512.
	BlockFrames int
	// Unsynced, when set, is asked once per window whether the system clock
	// lacks synchronisation (records then carry clock_unsynced). nil = synced.
	Unsynced func() bool
	// Logger receives rate-limited warnings; nil discards.
	Logger *slog.Logger
	// Events, when set, turns on voltage-event detection with these
	// thresholds and capture lengths (the signal fields are filled from
	// the pipeline); EventSink receives the events (nil = flags only).
	Events    *events.Config
	EventSink EventSink
}

// Window cutting.
const (
	// measureHigh is the highest frequency, relative to nominal, at which
	// harmonics are meant to be measured (115 %, the top of the IEC
	// 61000-4-30 range, with margin): the sample rate must exceed twice the
	// highest order there. config.Validate applies the same rule
	// (trackHighPct), so a rate that passes `config --check` gets no
	// warning here.
	measureHigh = 1.15
	// edgeSnap is the distance, in samples, within which an ideal window
	// edge is put on the nearest sample (4·10⁻⁶ of a 2048-sample window).
	edgeSnap = 0.01
	// tenGuard is how many of the longest cycles past a 10 s boundary the
	// interval waits for its closing crossing (the filter delay is under one
	// cycle) before it closes without one.
	tenGuard = 3
)

// Pipeline runs the per-sample path for one source. It is not safe for
// concurrent use; one goroutine owns it.
type Pipeline struct {
	cfg    Config
	setup  *metrics.Setup
	log    *slog.Logger
	clock  Clock
	fs     float64
	nomHz  float64
	cycles float64
	lockV  float64
	nch    int
	ref    int

	raw    []float64
	buf    [][]float64
	scale  []float64
	off    []float64
	clipHi []float64 // clipped at or above, per channel (engineering units), +Inf when none
	clipLo []float64 // clipped at or below, −Inf when none

	ex *exact // window samples, banks and the leakage correction (exact.go)
	// odd holds the window's sums over its samples of odd index (by the
	// sample count since the start), per channel Σx and Σx², then Σv·i per
	// product; p.in holds those of even index until finish adds the two.
	// Two chains of additions instead of one run twice as fast, and the
	// split by index, not by position in a block, keeps the result the
	// same however a source cuts its reads.
	odd []float64

	in  metrics.Input
	rec *metrics.Record
	trk tracker

	ev      *events.Detector // nil = no event detection
	evNames []string         // voltage channel names, detector order
	evErr   error            // first error from the EventSink
	pending bool             // p.rec is a closed window not yet emitted (see deferEmit)
	pendS   uint64           // its first sample
	pendE   uint64           // and the sample after its last

	// window state
	idx      uint64  // index of the next sample
	winStart uint64  // first sample of the current window
	winN     int     // samples in the current window
	filled   int     // samples accumulated so far
	edgeI    uint64  // ideal start edge of the next window: integer part
	edgeR    float64 // and fraction in [0, 1)
	tenEnd   uint64  // sample index where the current 10 s interval ends
	leftover int     // samples of an unfinished window at EOF
	windows  uint64

	// gaps (gap.go)
	missing    uint64 // frames a source reported missing so far
	winMissing int    // missing samples in the current window
}

// New validates cfg and allocates every buffer the run needs.
func New(cfg Config) (*Pipeline, error) {
	if err := checkConfig(cfg); err != nil {
		return nil, err
	}
	s := cfg.Setup
	p := &Pipeline{cfg: cfg, setup: s, fs: cfg.SampleRate, nomHz: cfg.NominalHz, nch: len(s.Channels), ref: s.Reference}
	p.log = cfg.Logger
	if p.log == nil {
		p.log = slog.New(slog.DiscardHandler)
	}
	if maxOrder := s.Orders[len(s.Orders)-1]; float64(maxOrder)*cfg.NominalHz*measureHigh >= cfg.SampleRate/2 {
		// still runs, but the top orders alias; config validation warns earlier
		p.log.Warn("sample rate too low for the highest order", "order", maxOrder, "sample_rate_hz", cfg.SampleRate)
	}
	p.cycles = 10
	if cfg.NominalHz == 60 {
		p.cycles = 12
	}
	p.lockV = cfg.LockMinRMS
	if p.lockV <= 0 {
		p.lockV = 0.10 * s.NominalV
	}
	base := cfg.Base
	if base.IsZero() {
		base = time.Unix(0, 0).UTC()
	}
	p.clock = NewClock(base, cfg.SampleRate)
	bf := cfg.BlockFrames
	if bf <= 0 {
		bf = 512
	}
	p.allocChannels(bf)
	ex, err := newExact(cfg.SampleRate, p.cycles, p.nomHz*(1-trackRange), p.nch, s.Orders)
	if err != nil {
		return nil, fmt.Errorf("%w: %w", ErrConfig, err)
	}
	p.ex = ex
	p.in.SumVI = make([]float64, len(s.Products))
	p.odd = make([]float64, 2*p.nch+len(s.Products))
	p.rec = metrics.NewRecord(s)
	p.trk = newTracker(cfg.SampleRate, cfg.NominalHz, p.lockV)
	p.tenEnd = p.nextTenEnd(0)
	p.trk.zc.setTen(p.tenEnd)
	if err := p.initEvents(bf); err != nil {
		return nil, err
	}
	p.startWindow()
	return p, nil
}

// checkConfig returns an ErrConfig error naming the first setting New
// cannot run with: no channels, a sample rate that is not a positive finite
// number, a nominal frequency other than 50 or 60 Hz, or a calibration list
// whose length is not the channel count.
func checkConfig(cfg Config) error {
	s := cfg.Setup
	if s == nil || len(s.Channels) == 0 {
		return fmt.Errorf("%w: no channels", ErrConfig)
	}
	if !(cfg.SampleRate > 0) || math.IsInf(cfg.SampleRate, 0) {
		return fmt.Errorf("%w: sample rate %v Hz", ErrConfig, cfg.SampleRate)
	}
	if cfg.NominalHz != 50 && cfg.NominalHz != 60 {
		return fmt.Errorf("%w: nominal frequency %v Hz, want 50 or 60", ErrConfig, cfg.NominalHz)
	}
	if cfg.Cal != nil && len(cfg.Cal) != len(s.Channels) {
		return fmt.Errorf("%w: %d calibrations for %d channels", ErrConfig, len(cfg.Cal), len(s.Channels))
	}
	return nil
}

// allocChannels allocates the per-channel state for blocks of bf frames:
// the raw block, the de-interleaved buffers, the calibration (scale 1 and
// offset 0 where cfg.Cal gives none), the clip limits (±FullScale, or
// infinite when it is 0) and the phasor sums.
func (p *Pipeline) allocChannels(bf int) {
	cfg, s := &p.cfg, p.setup
	p.raw = make([]float64, bf*p.nch)
	p.buf = make([][]float64, p.nch)
	p.scale = make([]float64, p.nch)
	p.off = make([]float64, p.nch)
	p.clipHi = make([]float64, p.nch)
	p.clipLo = make([]float64, p.nch)
	p.in.Ch = make([]metrics.ChannelSums, p.nch)
	for c := range p.nch {
		p.buf[c] = make([]float64, bf)
		p.scale[c], p.off[c] = 1, 0
		if cfg.Cal != nil {
			if cfg.Cal[c].Scale != 0 {
				p.scale[c] = cfg.Cal[c].Scale
			}
			p.off[c] = cfg.Cal[c].Offset
		}
		p.clipHi[c], p.clipLo[c] = math.Inf(1), math.Inf(-1)
		if fs := s.Channels[c].FullScale; fs > 0 {
			p.clipHi[c], p.clipLo[c] = fs, -fs
		}
		p.in.Ch[c].Phasors = make([]complex128, len(s.Orders))
	}
}

// nextTenEnd returns the sample index of the first 10 s wall-clock boundary
// strictly after sample idx.
func (p *Pipeline) nextTenEnd(idx uint64) uint64 {
	t := p.clock.Time(idx)
	b := t.Truncate(10 * time.Second).Add(10 * time.Second)
	next := p.clock.Index(b)
	if next <= idx { // cannot happen with exact Index; never let the boundary stall
		next = idx + 1
	}
	return next
}

// startWindow cuts the next window: it holds p.cycles cycles of p.fUsed,
// its ideal edges are carried with their fractions so that no sample is lost
// or counted twice and rounding never accumulates.
func (p *Pipeline) startWindow() {
	f := p.trk.fUsed
	l := p.cycles * p.fs / f
	startCeil := p.edgeI
	if p.edgeR > 0 {
		startCeil++
	}
	r := p.edgeR + l
	// An ideal edge within edgeSnap of a whole sample is put on it: with
	// the tracked frequency jittering by parts per million, an edge sitting
	// on a sample would otherwise flip between neighbours and cut windows
	// of N+1 and N−1 samples in turn.
	if rr := math.Round(r); math.Abs(r-rr) < edgeSnap {
		r = rr
	}
	whole := math.Floor(r)
	p.edgeI += uint64(whole)
	p.edgeR = r - whole
	endCeil := p.edgeI
	if p.edgeR > 0 {
		endCeil++
	}
	p.winStart = p.idx // equals startCeil: windows are gapless by construction
	p.winN = int(endCeil - startCeil)
	p.filled = 0
	for c := range p.nch {
		ch := &p.in.Ch[c]
		ch.N, ch.Sum, ch.SumSq, ch.Peak, ch.Clipped, ch.Bad = 0, 0, 0, 0, false, false
	}
	for i := range p.in.SumVI {
		p.in.SumVI[i] = 0
	}
	clear(p.odd)
}

// Windows returns how many windows have been emitted.
func (p *Pipeline) Windows() uint64 { return p.windows }

// Leftover returns the samples of an unfinished window dropped at the end of
// the input (a cut recording); 0 when the input ended on a window edge.
func (p *Pipeline) Leftover() int { return p.leftover }

// Samples returns the number of samples consumed.
func (p *Pipeline) Samples() uint64 { return p.idx }

// Clock returns the pipeline's sample clock.
func (p *Pipeline) Clock() Clock { return p.clock }

// Run reads src until io.EOF, an error or ctx's cancellation, calling emit
// with each window record (200 ms). emit must not keep the record: it is
// reused. Run returns nil at io.EOF and on cancellation; an error from src
// is wrapped with ErrSource after the frames that came with it are
// processed, except a *Gap, which is a hole in the data and not an end; an error from emit stops the run and is returned as is.
func (p *Pipeline) Run(ctx context.Context, src FrameReader, emit func(*metrics.Record) error) error {
	p.useRails(src)
	for {
		if err := ctx.Err(); err != nil {
			return p.endEvents(emit)
		}
		n, rerr := src.ReadFrames(p.raw)
		if n < 0 || n*p.nch > len(p.raw) {
			return fmt.Errorf("%w: source returned %d frames for a %d-frame buffer", ErrSource, n, len(p.raw)/p.nch)
		}
		if n > 0 {
			if err := p.block(n, emit); err != nil {
				return err
			}
		}
		if g := asGap(rerr); g != nil {
			if err := p.skipGap(g.Missing, emit); err != nil {
				return err
			}
			continue
		}
		if rerr != nil {
			p.leftover = p.filled
			if errors.Is(rerr, io.EOF) {
				return p.endEvents(emit)
			}
			return fmt.Errorf("%w: %w", ErrSource, rerr)
		}
	}
}

// block calibrates and de-interleaves n frames, then feeds them window by window.
func (p *Pipeline) block(n int, emit func(*metrics.Record) error) error {
	nch := p.nch
	for c := range nch {
		dst := p.buf[c][:n]
		sc, of := p.scale[c], p.off[c]
		for i := range dst {
			dst[i] = p.raw[i*nch+c]*sc + of
		}
	}
	off := 0
	for off < n {
		k := min(p.winN-p.filled, n-off)
		p.segment(off, k)
		off += k
		if err := p.emitPending(emit, false); err != nil {
			return err
		}
		if p.filled == p.winN {
			if err := p.finish(emit); err != nil {
				return err
			}
		}
	}
	return nil
}

// segment accumulates samples [off, off+k) of the current block into the
// window: it stores them in the window's buffer and sums them in the same
// pass, samples of even index into p.in and of odd index into p.odd.
func (p *Pipeline) segment(off, k int) {
	first := int(p.idx & 1) // 1 when the segment starts on an odd index
	for c := range p.nch {
		seg := p.buf[c][off : off+k]
		win := p.ex.span(c, p.filled, k)
		ch := &p.in.Ch[c]
		s0, ss0, pk0 := ch.Sum, ch.SumSq, ch.Peak
		s1, ss1, pk1 := p.odd[2*c], p.odd[2*c+1], ch.Peak
		hi, lo := p.clipHi[c], p.clipLo[c]
		clip := false
		i := 0
		if first == 1 && len(seg) > 0 && len(win) > 0 {
			x := seg[0]
			win[0] = x
			s1 += x
			ss1 += x * x
			pk1 = max(pk1, math.Abs(x))
			clip = x >= hi || x <= lo
			i = 1
		}
		for ; i+1 < len(seg) && i+1 < len(win); i += 2 {
			x0, x1 := seg[i], seg[i+1]
			win[i], win[i+1] = x0, x1
			s0 += x0
			s1 += x1
			ss0 += x0 * x0
			ss1 += x1 * x1
			pk0 = max(pk0, math.Abs(x0))
			pk1 = max(pk1, math.Abs(x1))
			if x0 >= hi || x0 <= lo || x1 >= hi || x1 <= lo {
				clip = true
			}
		}
		if i < len(seg) && i < len(win) { // a last sample of even index
			x := seg[i]
			win[i] = x
			s0 += x
			ss0 += x * x
			pk0 = max(pk0, math.Abs(x))
			if x >= hi || x <= lo {
				clip = true
			}
		}
		ch.Sum, ch.SumSq, ch.Peak, ch.N = s0, ss0, max(pk0, pk1), ch.N+k
		p.odd[2*c], p.odd[2*c+1] = s1, ss1
		if clip {
			ch.Clipped = true
		}
	}
	ref := p.buf[p.ref][off : off+k]
	p.trk.zc.write(ref)
	if p.ev != nil {
		p.eventsWrite(off, k)
	}
	for i, pr := range p.setup.Products {
		v, cur := p.buf[pr.V][off:off+k], p.buf[pr.I][off:off+k]
		a0, a1 := p.in.SumVI[i], p.odd[2*p.nch+i]
		j := 0
		if first == 1 && len(v) > 0 && len(cur) > 0 {
			a1 += v[0] * cur[0]
			j = 1
		}
		for ; j+1 < len(v) && j+1 < len(cur); j += 2 {
			a0 += v[j] * cur[j]
			a1 += v[j+1] * cur[j+1]
		}
		if j < len(v) && j < len(cur) {
			a0 += v[j] * cur[j]
		}
		p.in.SumVI[i], p.odd[2*p.nch+i] = a0, a1
	}
	p.filled += k
	p.idx += uint64(k)
}

// finish closes the current window: frequency, metrics, emit, next cut.
func (p *Pipeline) finish(emit func(*metrics.Record) error) error {
	for c := range p.nch {
		ch := &p.in.Ch[c]
		ch.Sum += p.odd[2*c]
		ch.SumSq += p.odd[2*c+1]
		if math.IsNaN(ch.Sum) || math.IsInf(ch.Sum, 0) || math.IsNaN(ch.SumSq) || math.IsInf(ch.SumSq, 0) {
			ch.Bad = true
		}
	}
	for i := range p.in.SumVI {
		p.in.SumVI[i] += p.odd[2*p.nch+i]
	}
	realBad := p.gapNull()
	fMeas, lock := p.analyse()
	p.in.FreqHz = fMeas
	p.in.Lock = lock
	rec := p.rec
	metrics.Compute(p.setup, &p.in, rec)
	rec.Interval = metrics.Int200ms
	rec.Start = p.clock.Time(p.winStart)
	rec.Samples = uint64(p.winN)
	rec.DurationS = float64(p.winN) / p.fs
	if !lock {
		rec.Flags |= metrics.FlagNoLock
	}
	p.eventFrequency(p.trk.fUsed, lock)
	if p.cfg.Unsynced != nil && p.cfg.Unsynced() {
		rec.Flags |= metrics.FlagClockUnsynced
	}
	p.gapFlag(rec, realBad)
	rec.HasFreq10s = false
	if p.idx >= p.tenEnd {
		// The interval closes at the first crossing past its end (delay
		// removed). Without one within tenGuard cycles (the signal is
		// gone), it closes here.
		zc := &p.trk.zc
		if zc.nextTen != 0 && float64(p.idx-p.tenEnd) >= tenGuard*zc.maxP {
			zc.closeTen()
		}
		if f, ok := zc.takeTen(); ok {
			if !math.IsNaN(f) {
				rec.Freq10sHz, rec.HasFreq10s = f, true
			}
			p.tenEnd = p.nextTenEnd(p.tenEnd)
			zc.setTen(p.tenEnd)
		}
	}
	p.windows++
	if p.ev != nil {
		return p.deferEmit(emit)
	}
	if err := emit(rec); err != nil {
		return err
	}
	p.startWindow()
	return nil
}

// analyse measures the window's frequency on the reference channel, fills
// the phasors and sums of a window of exactly 10 (12) cycles of it, and sets
// the next cut. The window is synchronized (lock) when the frequency comes
// from the fundamental's phase and the window's whole samples are within
// maxMismatch of its cycles, so that the leakage correction holds. Without
// lock the phasors are those of the window as cut, at the cut frequency.
func (p *Pipeline) analyse() (fMeas float64, lock bool) {
	n := p.winN
	used := p.trk.fUsed
	x := p.ex.win[p.ref][:n]
	w0 := used / p.fs
	f, fine := p.trk.measure(goertzel.Phasor(x, w0), goertzel.Phasor(x[:n/2], w0), n, p.in.Ch[p.ref].Bad)
	fw := used
	if fine {
		f = p.ex.refine(p.ref, n, f)
		fw = f
	}
	correct := fine && math.Abs(float64(n)-p.cycles*p.fs/fw) <= maxMismatch*float64(n)
	lock = p.ex.analyse(&p.in, p.setup.Products, n, fw, correct) && correct
	p.trk.commit(f, fine, lock)
	p.in.OmegaHz = fw
	return f, lock
}

// railer is the optional interface of a source of integer samples: the most
// negative and most positive raw value a sample can hold (ok false when the
// samples have no rail, e.g. float).
type railer interface {
	Rails() (lo, hi float64, ok bool)
}

// useRails sets each channel's clip thresholds to the lower of full_scale
// and the source's integer rail in engineering units (a 16-bit recording
// clamps at +32767, one step below a full_scale of 32768·scale).
func (p *Pipeline) useRails(src FrameReader) {
	r, ok := src.(railer)
	if !ok {
		return
	}
	lo, hi, ok := r.Rails()
	if !ok {
		return
	}
	for c := range p.nch {
		a, b := lo*p.scale[c]+p.off[c], hi*p.scale[c]+p.off[c]
		if a > b {
			a, b = b, a
		}
		p.clipHi[c], p.clipLo[c] = min(p.clipHi[c], b), max(p.clipLo[c], a)
	}
}
