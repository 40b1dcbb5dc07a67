package events

import (
	"fmt"
	"math"
)

// Kind is an event's kind.
type Kind uint8

// Event kinds.
const (
	Dip Kind = iota + 1
	Swell
	Interruption
)

var kindNames = [...]string{"", "dip", "swell", "interruption"}

// String returns "dip", "swell" or "interruption".
func (k Kind) String() string {
	if int(k) < len(kindNames) && k != 0 {
		return kindNames[k]
	}
	return "invalid"
}

// ParseKind returns the kind named s.
func ParseKind(s string) (Kind, bool) {
	for i, n := range kindNames {
		if i > 0 && n == s {
			return Kind(i), true
		}
	}
	return 0, false
}

// Config configures a Detector. Percentages are of DeclaredV.
type Config struct {
	SampleRate float64 // Hz; required
	NominalHz  float64 // 50 or 60; required
	DeclaredV  float64 // declared voltage Udin, engineering units; required, > 0
	Voltages   []int   // frame indices of the voltage channels; 1..64 of them
	Channels   int     // channels per frame; every one is captured
	MaxBlock   int     // the most samples per channel given to one Write; required

	DipPct          float64 // an event opens below this; default 90 (zero = default)
	SwellPct        float64 // and above this; default 110
	InterruptionPct float64 // all voltage channels below this turn a dip into an interruption; default 5
	HysteresisPct   float64 // a dip ends at DipPct+HysteresisPct, a swell at SwellPct−HysteresisPct; default 2 (negative = 0)
	PreCycles       int     // nominal cycles captured before the start; default 10 (negative = 0)
	PostCycles      int     // nominal cycles captured after the end; default 20 (negative = 0)
	MaxCaptureS     float64 // a capture is cut at this length, seconds; default 4

	// NoCapture keeps no waveforms, for a caller that wants the events and
	// flags only: the ring (Channels float32 values per frame for
	// MaxCaptureS plus MaxBlock frames, about 1 MB for six channels at
	// 10.24 kHz) is not allocated. Events, notes and capture bounds are the
	// same; Waveform has no frames.
	NoCapture bool
}

// DefaultConfig returns the thresholds DESIGN's "Voltage events" section
// fixes as defaults; the caller fills the signal fields.
func DefaultConfig() Config {
	return Config{DipPct: 90, SwellPct: 110, InterruptionPct: 5, HysteresisPct: 2,
		PreCycles: 10, PostCycles: 20, MaxCaptureS: 4}
}

// Event is one voltage event. Times are sample indices of the stream the
// Detector was fed (index 0 is its first sample).
type Event struct {
	Kind       Kind
	Start      uint64  // first sample of the half cycle whose Urms(1/2) value crossed first
	End        uint64  // first sample of the half cycle whose value closed it (Unfinished: the last sample seen + 1)
	Mask       uint64  // bit i: Config.Voltages[i] crossed the threshold during the event
	Worst      int     // index into Config.Voltages of the channel holding the extreme
	ExtremeV   float64 // residual (dips, interruptions: the lowest Urms(1/2)) or maximum (swells)
	Unfinished bool    // still open when the stream ended; closed by Close

	CaptureStart  uint64 // first captured frame
	CaptureFrames int    // captured frames
	CaptureCut    bool   // the capture was cut at MaxCaptureS
}

// Duration returns End − Start in samples.
func (e *Event) Duration() uint64 { return e.End - e.Start }

// NoteKind says what a Note reports.
type NoteKind uint8

// Note kinds. For every event a Captured note comes first, then an Ended one.
const (
	// Captured: the capture is complete; Detector.Waveform reads it until
	// the next Write. The event may still be open (a cut capture).
	Captured NoteKind = iota + 1
	// Ended: the event is closed and final.
	Ended
)

// Note is one report from the Detector; drain them with Next after each Write.
type Note struct {
	Kind  NoteKind
	Event Event
}

// machine follows one kind of event (dips with interruptions, or swells).
type machine struct {
	active  bool // the event is open
	waiting bool // closed, capture still running
	capDone bool // its Captured note was queued
	capEnd  uint64
	ev      Event
}

// noteCap bounds the notes waiting between Writes: each event gives two,
// and at most a dip and a swell complete within one block.
const noteCap = 8

// trackRange bounds the frequency the half-cycle grid follows (±30 % of
// nominal, as the pipeline's tracker); outside it the grid uses nominal.
const trackRange = 0.30

// Detector turns samples into events. It is not safe for concurrent use.
type Detector struct {
	cfg   Config
	nv    int
	nomHL float64 // nominal half cycle, samples

	dipThr, dipEnd, swellThr, swellEnd, intThr float64

	halfLen float64 // half cycle in use, samples
	edgeI   uint64  // ideal position of the next half-cycle edge: integer part
	edgeR   float64 // and fraction in [0, 1)
	nextB   uint64  // first sample of the next half cycle
	idx     uint64  // index of the next sample
	cur     []float64
	prev    []float64
	curN    int
	prevN   int
	curL    float64   // ideal length of the half cycle in progress, samples
	prevL   float64   // and of the one before
	lastSq  []float64 // square of the latest sample, per voltage channel
	halves  int
	u       []float64 // latest Urms(1/2), NaN before the first full cycle or over bad samples

	m [2]machine // 0: dip/interruption, 1: swell

	ring       []float32
	ringFrames int
	maxFrames  int
	preFrames  int
	postFrames int

	notes   [noteCap]Note
	nHead   int
	nLen    int
	dropped int

	lastB   uint64 // index at the latest half-cycle edge
	prevB   uint64 // and at the one before
	lastEnd uint64 // latest End of a closed event, for Overlaps
	hasEnd  bool
}

// WithDefaults returns cfg with the defaults of DefaultConfig in place of
// zero thresholds and capture lengths, as New applies them.
func WithDefaults(cfg Config) Config {
	def := DefaultConfig()
	setDef := func(v *float64, d float64) {
		if *v == 0 {
			*v = d
		}
	}
	setDef(&cfg.DipPct, def.DipPct)
	setDef(&cfg.SwellPct, def.SwellPct)
	setDef(&cfg.InterruptionPct, def.InterruptionPct)
	setDef(&cfg.MaxCaptureS, def.MaxCaptureS)
	cfg.HysteresisPct = max(cfg.HysteresisPct, 0)
	cfg.PreCycles, cfg.PostCycles = max(cfg.PreCycles, 0), max(cfg.PostCycles, 0)
	return cfg
}

// New validates cfg, applies defaults and allocates the ring.
func New(cfg Config) (*Detector, error) {
	cfg = WithDefaults(cfg)
	switch {
	case !(cfg.SampleRate > 0) || math.IsInf(cfg.SampleRate, 0):
		return nil, fmt.Errorf("%w: sample rate %v Hz", ErrConfig, cfg.SampleRate)
	case cfg.NominalHz != 50 && cfg.NominalHz != 60:
		return nil, fmt.Errorf("%w: nominal frequency %v Hz, want 50 or 60", ErrConfig, cfg.NominalHz)
	case !(cfg.DeclaredV > 0) || math.IsInf(cfg.DeclaredV, 0):
		return nil, fmt.Errorf("%w: declared voltage %v", ErrConfig, cfg.DeclaredV)
	case len(cfg.Voltages) == 0 || len(cfg.Voltages) > 64:
		return nil, fmt.Errorf("%w: %d voltage channels, want 1..64", ErrConfig, len(cfg.Voltages))
	case cfg.MaxBlock <= 0:
		return nil, fmt.Errorf("%w: max block %d", ErrConfig, cfg.MaxBlock)
	case !(cfg.InterruptionPct > 0 && cfg.InterruptionPct < cfg.DipPct && cfg.DipPct+cfg.HysteresisPct < 100):
		return nil, fmt.Errorf("%w: thresholds need 0 < interruption (%v %%) < dip (%v %%) and dip + hysteresis (%v %%) < 100 %%",
			ErrConfig, cfg.InterruptionPct, cfg.DipPct, cfg.HysteresisPct)
	case !(cfg.SwellPct-cfg.HysteresisPct > 100) || math.IsInf(cfg.SwellPct, 0):
		return nil, fmt.Errorf("%w: swell threshold %v %% minus hysteresis %v %% must stay above 100 %%", ErrConfig, cfg.SwellPct, cfg.HysteresisPct)
	case !(cfg.MaxCaptureS > 0 && cfg.MaxCaptureS <= 60):
		return nil, fmt.Errorf("%w: max capture %v s, want (0, 60]", ErrConfig, cfg.MaxCaptureS)
	}
	for _, c := range cfg.Voltages {
		if c < 0 || c >= cfg.Channels {
			return nil, fmt.Errorf("%w: voltage channel index %d outside the %d channels", ErrConfig, c, cfg.Channels)
		}
	}
	cfg.Voltages = append([]int(nil), cfg.Voltages...)
	d := &Detector{cfg: cfg, nv: len(cfg.Voltages)}
	v := cfg.DeclaredV / 100
	d.dipThr, d.dipEnd = cfg.DipPct*v, (cfg.DipPct+cfg.HysteresisPct)*v
	d.swellThr, d.swellEnd = cfg.SwellPct*v, (cfg.SwellPct-cfg.HysteresisPct)*v
	d.intThr = cfg.InterruptionPct * v
	d.nomHL = cfg.SampleRate / (2 * cfg.NominalHz)
	d.halfLen = d.nomHL
	d.cur = make([]float64, d.nv)
	d.prev = make([]float64, d.nv)
	d.u = make([]float64, d.nv)
	d.lastSq = make([]float64, d.nv)
	for i := range d.u {
		d.u[i] = math.NaN()
	}
	cyc := cfg.SampleRate / cfg.NominalHz
	d.maxFrames = int(math.Ceil(cfg.MaxCaptureS * cfg.SampleRate))
	d.preFrames = min(int(math.Round(float64(cfg.PreCycles)*cyc)), d.maxFrames/2)
	d.postFrames = int(math.Round(float64(cfg.PostCycles) * cyc))
	d.ringFrames = d.maxFrames + cfg.MaxBlock
	if !cfg.NoCapture {
		d.ring = make([]float32, d.ringFrames*cfg.Channels)
	}
	d.advanceEdge()
	return d, nil
}

// RingBytes returns the capture ring's size in bytes (constant for the run;
// 0 with NoCapture).
func (d *Detector) RingBytes() int { return 4 * len(d.ring) }

// Config returns the configuration in use, defaults applied.
func (d *Detector) Config() Config { return d.cfg }

// SetFrequency sets the line frequency the next half cycles are cut for:
// hz when locked and within ±30 % of nominal, else nominal.
func (d *Detector) SetFrequency(hz float64, locked bool) {
	n := d.cfg.NominalHz
	if locked && hz >= n*(1-trackRange) && hz <= n*(1+trackRange) {
		d.halfLen = d.cfg.SampleRate / (2 * hz)
		return
	}
	d.halfLen = d.nomHL
}

// advanceEdge moves the ideal half-cycle edge on by halfLen, carrying the
// fraction so rounding never accumulates.
func (d *Detector) advanceEdge() {
	r := d.edgeR + d.halfLen
	d.curL = d.halfLen
	w := math.Floor(r)
	d.edgeI += uint64(w)
	d.edgeR = r - w
	d.nextB = d.edgeI
	if d.edgeR > 0 {
		d.nextB++
	}
	if d.nextB <= d.idx { // never let a boundary stall
		d.nextB = d.idx + 1
	}
}

// Urms copies the latest Urms(1/2) values (one per voltage channel, in
// Config.Voltages order; NaN before the first full cycle) into dst.
func (d *Detector) Urms(dst []float64) { copy(dst, d.u) }

// Write feeds samples [off, off+k) of every channel's block (buf[c] is
// channel c, calibrated). k must not exceed MaxBlock. Drain Next after it.
// No allocations.
func (d *Detector) Write(buf [][]float64, off, k int) {
	if k > d.cfg.MaxBlock || len(buf) < d.cfg.Channels {
		panic("events: Write: block larger than MaxBlock or too few channels")
	}
	for k > 0 {
		lim := d.nextB
		for i := range d.m {
			if mc := &d.m[i]; (mc.active || mc.waiting) && !mc.capDone && mc.capEnd < lim {
				lim = mc.capEnd
			}
		}
		n := k
		if lim > d.idx && lim-d.idx < uint64(n) {
			n = int(lim - d.idx)
		}
		for vi, c := range d.cfg.Voltages {
			s := d.cur[vi]
			for _, x := range buf[c][off : off+n] {
				s += x * x
			}
			d.cur[vi] = s
			x := buf[c][off+n-1]
			d.lastSq[vi] = x * x
		}
		d.capture(buf, off, n)
		d.idx += uint64(n)
		d.curN += n
		off += n
		k -= n
		if d.idx >= d.nextB {
			d.boundary()
		}
		d.captures()
	}
}

// capture stores samples [off, off+n) of every channel in the ring.
func (d *Detector) capture(buf [][]float64, off, n int) {
	if d.ring == nil {
		return
	}
	nch := d.cfg.Channels
	pos := int(d.idx % uint64(d.ringFrames))
	for i := range n {
		row := d.ring[pos*nch : pos*nch+nch]
		for c := range row {
			row[c] = float32(buf[c][off+i])
		}
		pos++
		if pos == d.ringFrames {
			pos = 0
		}
	}
}

// boundary closes a half cycle: new Urms(1/2) values, then the rules.
//
// The ideal edge of a half cycle falls between samples; sample i stands for
// [i, i+1), so the part of the last sample beyond the edge (frac) moves to
// the next half cycle. A cycle then spans exactly fs/f samples, not the
// 204 or 205 whole samples of a 204.7-sample cycle, which would move a
// steady Urms(1/2) by up to ~0.1 %.
func (d *Detector) boundary() {
	d.prevB, d.lastB = d.lastB, d.idx
	stamp := d.idx - uint64(d.curN)
	frac := 0.0
	if d.edgeR > 0 {
		frac = 1 - d.edgeR
	}
	for i := range d.cur {
		d.cur[i] -= frac * d.lastSq[i]
	}
	if d.halves >= 1 {
		n := d.prevL + d.curL
		for i := range d.u {
			d.u[i] = math.Sqrt(max(d.prev[i]+d.cur[i], 0) / n)
		}
		d.evaluate(stamp, stamp-uint64(d.prevN))
	}
	d.prev, d.cur = d.cur, d.prev
	d.prevN, d.curN, d.prevL = d.curN, 0, d.curL
	for i := range d.cur {
		d.cur[i] = frac * d.lastSq[i]
	}
	d.halves++
	d.advanceEdge()
}

// evaluate applies the start and end rules to the latest values. stamp is
// the first sample of the half cycle that just arrived, early that of the
// one before it.
//
// Detection uses Urms(1/2), the one-cycle value. The time stamp uses the
// two half cycles inside that cycle: when the earlier half on its own is
// already past the threshold (its mean square, exact for a half cycle of a
// sine), the change happened in or before it and the event is stamped at
// its start; otherwise at the start of the later half. For a step change
// this places start and end within half a cycle of the step, where the
// start of the later half alone could be off by up to one cycle for a
// shallow dip. The same rule stamps the end.
func (d *Detector) evaluate(stamp, early uint64) {
	pl := d.prevL
	if pl <= 0 {
		pl = 1
	}
	dipSq, endSq := d.dipThr*d.dipThr, d.dipEnd*d.dipEnd
	// dips and interruptions
	dm := &d.m[0]
	anyBelow, allBelowInt, allBack := false, true, true
	earlyStart, earlyEnd := false, true
	for i, v := range d.u {
		ms := d.prev[i] / pl
		if v < d.dipThr {
			anyBelow = true
			earlyStart = earlyStart || ms < dipSq
		}
		allBelowInt = allBelowInt && v < d.intThr
		allBack = allBack && v >= d.dipEnd // NaN is not back
		earlyEnd = earlyEnd && ms >= endSq
	}
	if !dm.active && anyBelow {
		d.open(dm, Dip, pick(earlyStart, early, stamp))
	} else if dm.active {
		if allBack {
			d.close(dm, max(pick(earlyEnd, early, stamp), dm.ev.Start), false)
		}
	}
	if dm.active {
		for i, v := range d.u {
			if v < d.dipThr {
				dm.ev.Mask |= 1 << i
			}
			if v < dm.ev.ExtremeV {
				dm.ev.ExtremeV, dm.ev.Worst = v, i
			}
		}
		// An interruption inside a dip: the whole event is reported once,
		// as the interruption (polyphase: every channel below the
		// interruption threshold at some half cycle).
		if allBelowInt {
			dm.ev.Kind = Interruption
		}
	}
	// swells
	swSq, downSq := d.swellThr*d.swellThr, d.swellEnd*d.swellEnd
	sm := &d.m[1]
	anyAbove, allDown := false, true
	earlyStart, earlyEnd = false, true
	for i, v := range d.u {
		ms := d.prev[i] / pl
		if v > d.swellThr {
			anyAbove = true
			earlyStart = earlyStart || ms > swSq
		}
		allDown = allDown && v <= d.swellEnd
		earlyEnd = earlyEnd && ms <= downSq
	}
	if !sm.active && anyAbove {
		d.open(sm, Swell, pick(earlyStart, early, stamp))
	} else if sm.active && allDown {
		d.close(sm, max(pick(earlyEnd, early, stamp), sm.ev.Start), false)
	}
	if sm.active {
		for i, v := range d.u {
			if v > d.swellThr {
				sm.ev.Mask |= 1 << i
			}
			if v > sm.ev.ExtremeV {
				sm.ev.ExtremeV, sm.ev.Worst = v, i
			}
		}
	}
}

func pick(c bool, a, b uint64) uint64 {
	if c {
		return a
	}
	return b
}

func (d *Detector) open(mc *machine, k Kind, stamp uint64) {
	if mc.waiting { // back to back: the previous capture ends where this one starts
		mc.capEnd = d.idx
		d.captures()
	}
	ext := math.Inf(1)
	if k == Swell {
		ext = math.Inf(-1)
	}
	oldest := uint64(0)
	if held := uint64(d.ringFrames - d.cfg.MaxBlock); d.idx > held {
		oldest = d.idx - held
	}
	cs := uint64(0)
	if stamp > uint64(d.preFrames) {
		cs = stamp - uint64(d.preFrames)
	}
	cs = max(cs, oldest)
	*mc = machine{active: true, ev: Event{Kind: k, Start: stamp, ExtremeV: ext, CaptureStart: cs}}
	mc.capEnd = cs + uint64(d.maxFrames)
}

// close ends mc's event at end; unfinished marks a close at the stream's end.
func (d *Detector) close(mc *machine, end uint64, unfinished bool) {
	mc.active = false
	mc.ev.End = end
	mc.ev.Unfinished = unfinished
	if !d.hasEnd || end > d.lastEnd {
		d.lastEnd, d.hasEnd = end, true
	}
	if mc.capDone {
		d.push(Note{Kind: Ended, Event: mc.ev})
		return
	}
	mc.waiting = true
	mc.capEnd = min(mc.capEnd, end+uint64(d.postFrames))
	if unfinished {
		mc.capEnd = min(mc.capEnd, d.idx)
	}
	d.captures()
}

// captures queues the notes of captures that reached their end.
func (d *Detector) captures() {
	for i := range d.m {
		mc := &d.m[i]
		if !(mc.active || mc.waiting) || mc.capDone || d.idx < mc.capEnd {
			continue
		}
		mc.capDone = true
		mc.ev.CaptureFrames = int(mc.capEnd - mc.ev.CaptureStart)
		mc.ev.CaptureCut = mc.ev.CaptureFrames >= d.maxFrames
		d.push(Note{Kind: Captured, Event: mc.ev})
		if mc.waiting {
			mc.waiting = false
			d.push(Note{Kind: Ended, Event: mc.ev})
		}
	}
}

func (d *Detector) push(n Note) {
	if d.nLen == noteCap {
		d.dropped++
		return
	}
	d.notes[(d.nHead+d.nLen)%noteCap] = n
	d.nLen++
}

// Next returns the oldest waiting note.
func (d *Detector) Next() (Note, bool) {
	if d.nLen == 0 {
		return Note{}, false
	}
	n := d.notes[d.nHead]
	d.nHead = (d.nHead + 1) % noteCap
	d.nLen--
	return n, true
}

// Dropped returns how many notes were lost because Next was not called
// between Writes (a caller bug; 0 in a correct pipeline).
func (d *Detector) Dropped() int { return d.dropped }

// Close closes the open events (marked Unfinished, ending at the last
// sample seen) and completes running captures. Drain Next after it.
func (d *Detector) Close() {
	for i := range d.m {
		mc := &d.m[i]
		switch {
		case mc.active:
			d.close(mc, d.idx, true)
		case mc.waiting:
			mc.capEnd = d.idx
		}
	}
	d.captures()
}

// Settled reports whether every event starting before sample idx is known.
// An evaluation stamps no earlier than the start of the half cycle before
// the one that just arrived, so once that start is at or after idx, no
// later evaluation can stamp before idx.
func (d *Detector) Settled(idx uint64) bool { return d.prevB >= idx }

// Skip advances over k missing samples (a gap in the input; k ≤ MaxBlock):
// the capture ring holds NaN for them, and Urms(1/2) restarts on a fresh
// half-cycle grid after the gap (NaN until a full cycle has arrived, which
// holds open events open). Drain Next after it.
func (d *Detector) Skip(k int) {
	if k > d.cfg.MaxBlock {
		panic("events: Skip: more than MaxBlock samples")
	}
	if d.ring != nil {
		nch := d.cfg.Channels
		nan := float32(math.NaN())
		for i := range k {
			pos := int((d.idx + uint64(i)) % uint64(d.ringFrames))
			for c := range nch {
				d.ring[pos*nch+c] = nan
			}
		}
	}
	d.idx += uint64(k)
	for i := range d.u {
		d.u[i], d.cur[i], d.prev[i] = math.NaN(), 0, 0
	}
	d.curN, d.prevN, d.halves = 0, 0, 0
	d.edgeI, d.edgeR = d.idx, 0
	d.prevB, d.lastB = d.idx, d.idx
	d.advanceEdge()
	d.captures()
}

// Active reports whether an event is open.
func (d *Detector) Active() bool { return d.m[0].active || d.m[1].active }

// Overlaps reports whether an open event or the latest closed one overlaps
// samples [from, to). The pipeline asks it when a window closes.
func (d *Detector) Overlaps(from, to uint64) bool {
	for i := range d.m {
		if mc := &d.m[i]; mc.active && mc.ev.Start < to {
			return true
		}
	}
	return d.hasEnd && d.lastEnd > from
}

// Waveform returns a view of ev's capture in the ring. It is valid only
// until the next Write: copy what you keep. With NoCapture it has no
// frames.
func (d *Detector) Waveform(ev *Event) Waveform {
	if d.ring == nil {
		return Waveform{nch: d.cfg.Channels, ringFrames: d.ringFrames, start: ev.CaptureStart}
	}
	return Waveform{ring: d.ring, nch: d.cfg.Channels, ringFrames: d.ringFrames,
		start: ev.CaptureStart, n: ev.CaptureFrames}
}

// Waveform is a read-only view of captured frames.
type Waveform struct {
	ring       []float32
	nch        int
	ringFrames int
	start      uint64
	n          int
}

// Frames returns the number of captured frames.
func (w Waveform) Frames() int { return w.n }

// Channels returns the number of channels per frame.
func (w Waveform) Channels() int { return w.nch }

// At returns channel ch of captured frame i.
func (w Waveform) At(i, ch int) float32 {
	pos := int((w.start + uint64(i)) % uint64(w.ringFrames))
	return w.ring[pos*w.nch+ch]
}
