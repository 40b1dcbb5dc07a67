package stream

import (
	"fmt"

	"github.com/gridloupe/gridloupe/metrics"
	"github.com/gridloupe/gridloupe/metrics/events"
)

// VoltageEvent is one detected dip, swell or interruption as an EventSink
// receives it: the reported record and the detector's raw event.
type VoltageEvent struct {
	events.Record
	Raw events.Event
}

// EventSink receives voltage events on the pipeline's goroutine. For every
// event Capture comes first (the waveform view w is valid only during the
// call: copy what you keep), then Event when the event has ended (the same
// ID; for a capture cut at max_capture_s, later). An error stops the run.
type EventSink interface {
	Capture(e *VoltageEvent, w events.Waveform) error
	Event(e *VoltageEvent) error
}

// initEvents builds the detector when Config.Events is set.
func (p *Pipeline) initEvents(bf int) error {
	if p.cfg.Events == nil {
		return nil
	}
	ec := *p.cfg.Events
	ec.SampleRate, ec.NominalHz, ec.DeclaredV = p.fs, p.nomHz, p.setup.NominalV
	ec.Channels, ec.MaxBlock = p.nch, bf
	// Without a sink nobody reads a waveform (flags only): no ring.
	ec.NoCapture = p.cfg.EventSink == nil
	ec.Voltages = nil
	for i, ch := range p.setup.Channels {
		if ch.Kind == metrics.Voltage {
			ec.Voltages = append(ec.Voltages, i)
			p.evNames = append(p.evNames, ch.Name)
		}
	}
	d, err := events.New(ec)
	if err != nil {
		return fmt.Errorf("%w: %w", ErrConfig, err)
	}
	p.ev = d
	return nil
}

// eventsWrite feeds samples [off, off+k) of the block to the detector and
// hands its notes to the sink while the captured frames are still held.
func (p *Pipeline) eventsWrite(off, k int) {
	p.ev.Write(p.buf, off, k)
	p.drainEvents()
}

func (p *Pipeline) drainEvents() {
	for n, ok := p.ev.Next(); ok; n, ok = p.ev.Next() {
		if p.evErr != nil || p.cfg.EventSink == nil {
			continue
		}
		ve := p.voltageEvent(&n.Event)
		if n.Kind == events.Captured {
			p.evErr = p.cfg.EventSink.Capture(ve, p.ev.Waveform(&n.Event))
		} else {
			p.evErr = p.cfg.EventSink.Event(ve)
		}
	}
}

// endEvents closes events still open at the end of the input or at
// shutdown (they are marked unfinished), emits the window held back, and
// returns a sink or emit error.
func (p *Pipeline) endEvents(emit func(*metrics.Record) error) error {
	if p.ev == nil {
		return nil
	}
	p.ev.Close()
	p.drainEvents()
	if p.evErr != nil {
		return p.evErr
	}
	return p.emitPending(emit, true)
}

// deferEmit holds the window just closed back until the detector has
// passed the next half-cycle edge: an event is stamped at the start of the
// half cycle whose Urms(1/2) value crossed, so one that starts in the last
// half cycle of a window is known only after the window closes. The record
// is emitted, with event when an event overlaps it, a half cycle later.
func (p *Pipeline) deferEmit(emit func(*metrics.Record) error) error {
	if err := p.emitPending(emit, true); err != nil { // never more than one held
		return err
	}
	p.pending, p.pendS, p.pendE = true, p.winStart, p.winStart+uint64(p.winN)
	p.startWindow()
	return p.emitPending(emit, false)
}

// emitPending emits the held window once the detector has settled past its
// end (or at once when force is set).
func (p *Pipeline) emitPending(emit func(*metrics.Record) error, force bool) error {
	if p.evErr != nil {
		return p.evErr
	}
	if !p.pending || (!force && !p.ev.Settled(p.pendE)) {
		return nil
	}
	p.pending = false
	if p.ev.Overlaps(p.pendS, p.pendE) {
		p.rec.Flags |= metrics.FlagEvent
	}
	return emit(p.rec)
}

// eventsSkip advances the detector over m missing samples (a gap), in
// pieces its ring can hold, handing notes on between them.
func (p *Pipeline) eventsSkip(m uint64, emit func(*metrics.Record) error) error {
	if p.ev == nil {
		return nil
	}
	bf := uint64(len(p.raw) / p.nch)
	for m > 0 {
		k := min(m, bf)
		p.ev.Skip(int(k))
		p.drainEvents()
		m -= k
	}
	return p.emitPending(emit, false)
}

// voltageEvent dresses e in wall time and channel names (once per event,
// never per sample).
func (p *Pipeline) voltageEvent(e *events.Event) *VoltageEvent {
	ve := &VoltageEvent{Raw: *e}
	r := &ve.Record
	r.Kind = e.Kind
	r.Start = p.clock.Time(e.Start)
	r.ID = events.ID(e.Kind, r.Start)
	r.DurationS = float64(e.Duration()) / p.fs
	r.ExtremeV = e.ExtremeV
	r.WaveformSamples = e.CaptureFrames
	r.WaveformStart = p.clock.Time(e.CaptureStart)
	r.Unfinished, r.WaveformCut = e.Unfinished, e.CaptureCut
	for i, name := range p.evNames {
		if e.Mask&(1<<i) != 0 {
			r.Channels = append(r.Channels, name)
		}
	}
	if e.Worst >= 0 && e.Worst < len(p.evNames) {
		r.Worst = p.evNames[e.Worst]
	}
	if p.setup.NominalV > 0 {
		r.ExtremePct = e.ExtremeV / p.setup.NominalV * 100
	}
	return ve
}

// eventFrequency passes the tracker's cut frequency and lock on to the
// detector's half-cycle grid (nominal cycles while there is no lock).
func (p *Pipeline) eventFrequency(hz float64, lock bool) {
	if p.ev != nil {
		p.ev.SetFrequency(hz, lock)
	}
}
