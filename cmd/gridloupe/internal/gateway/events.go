package gateway

import (
	"sync/atomic"

	"github.com/gridloupe/gridloupe/metrics"
	"github.com/gridloupe/gridloupe/metrics/alarm"
	"github.com/gridloupe/gridloupe/metrics/events"
	"github.com/gridloupe/gridloupe/store"
	"github.com/gridloupe/gridloupe/stream"
	"github.com/gridloupe/gridloupe/stream/encode"
	"github.com/gridloupe/gridloupe/stream/mqtt/topic"
)

// eventStore is what the gateway needs to keep voltage events (*store.DB).
type eventStore interface {
	PutEvent(r events.Record, wave []byte, msg *store.Message) (uint64, error)
}

// eventItem is one finished event on its way to the store goroutine, or
// (open) news of a long event still going, for the event alarm rules only.
type eventItem struct {
	rec  events.Record
	wave []byte
	open bool
}

// eventQueueLen bounds the events between the two goroutines; each holds
// its encoded waveform (at most max_capture_s of every channel).
const eventQueueLen = 4

// eventSink receives events on the measurement goroutine: it encodes each
// capture at once (the pipeline's ring view is valid only during the call)
// and hands the finished event to the store goroutine.
type eventSink struct {
	meta  store.Waveform
	waves map[string][]byte // captures whose event is still open: at most a dip and a swell
	q     chan eventItem
	live  bool
	lost  *atomic.Uint64
}

func newEventSink(cfg *stream.Config, s *metrics.Setup, live bool, lost *atomic.Uint64) *eventSink {
	ec := events.WithDefaults(*cfg.Events)
	meta := store.Waveform{SampleRate: cfg.SampleRate, DeclaredV: s.NominalV, NominalHz: cfg.NominalHz,
		DipPct: ec.DipPct, SwellPct: ec.SwellPct, IntPct: ec.InterruptionPct, HystPct: ec.HysteresisPct}
	for _, ch := range s.Channels {
		meta.Channels = append(meta.Channels, store.WaveChannel{Name: ch.Name, Voltage: ch.Kind == metrics.Voltage})
	}
	return &eventSink{meta: meta, waves: map[string][]byte{}, q: make(chan eventItem, eventQueueLen), live: live, lost: lost}
}

func (s *eventSink) Capture(e *stream.VoltageEvent, w events.Waveform) error {
	m := s.meta
	m.Start = e.WaveformStart
	s.waves[e.ID] = store.EncodeWaveform(&m, w.Frames(), w.At)
	if e.Raw.End <= e.Raw.Start { // a long event, still open: its capture was cut at max_capture_s
		it := eventItem{rec: e.Record, open: true}
		it.rec.DurationS = 0 // so far: from its start to the end of the capture
		if end := e.Raw.CaptureStart + uint64(e.Raw.CaptureFrames); end > e.Raw.Start && s.meta.SampleRate > 0 {
			it.rec.DurationS = float64(end-e.Raw.Start) / s.meta.SampleRate
		}
		if !s.live {
			s.q <- it
			return nil
		}
		select {
		case s.q <- it:
		default: // a live source never blocks: the alarm then raises at the event's end
		}
	}
	return nil
}

func (s *eventSink) Event(e *stream.VoltageEvent) error {
	id := e.ID
	if _, ok := s.waves[id]; !ok {
		// a dip that turned into an interruption after its capture was
		// cut was captured under the dip's id (same start)
		if dip := events.ID(events.Dip, e.Start); e.Kind == events.Interruption && s.waves[dip] != nil {
			id = dip
		}
	}
	wave := s.waves[id]
	delete(s.waves, id)
	return s.queue(eventItem{rec: e.Record, wave: wave})
}

func (s *eventSink) queue(it eventItem) error {
	if !s.live {
		s.q <- it // replay and the simulator: back-pressure, nothing lost
		return nil
	}
	select {
	case s.q <- it:
	default:
		s.lost.Add(1) // a live source never blocks; counted in Stats.EventsLost
	}
	return nil
}

// storeEvent keeps one event with its waveform and queues its summary on
// …/event (QoS 1; the publisher puts seq first), in one transaction; then
// it hands the event to the alarm rules (news of an open event goes to the
// rules only).
func (g *Gateway) storeEvent(it eventItem) {
	defer g.eventAlarms(&it)
	if it.open {
		return
	}
	es, ok := g.cfg.Store.(eventStore)
	if !ok {
		return
	}
	var msg *store.Message
	if g.cfg.Base != "" {
		msg = &store.Message{Class: store.ClassEvent, QoS: 1, Topic: topic.Event(g.cfg.Base),
			Payload: eventPayload(g.cfg.Site, g.cfg.Gateway, &it.rec)}
	}
	seq, err := es.PutEvent(it.rec, it.wave, msg)
	if err != nil {
		g.storeError(err)
		return
	}
	g.clearErr()
	it.rec.Seq = seq
	g.log.Info("voltage event", "event", it.rec.Kind.String(), "id", it.rec.ID, "duration_s", it.rec.DurationS,
		"extreme_pct", it.rec.ExtremePct, "seq", seq)
	if msg != nil {
		g.queued.Add(1)
		g.kick()
	}
	if g.cfg.OnEvent != nil {
		g.cfg.OnEvent(it.rec)
	}
}

// eventAlarms applies an event to the event alarm rules and commits their
// transitions with their messages, as Evaluate's.
func (g *Gateway) eventAlarms(it *eventItem) {
	if g.cfg.Alarms == nil {
		return
	}
	r := &it.rec
	ev := alarm.Event{ID: r.ID, Kind: r.Kind, Start: r.Start, DurationS: r.DurationS, Channels: r.Channels,
		ExtremeV: r.ExtremeV, ExtremePct: r.ExtremePct, ThresholdV: g.eventThreshold(r.Kind),
		Open: it.open, Unfinished: r.Unfinished}
	g.trans = g.cfg.Alarms.Event(&ev, g.trans[:0])
	g.transitionsDone()
}

// eventThreshold is the threshold, V, an event of kind k crossed (the
// events config's percentages of the declared voltage).
func (g *Gateway) eventThreshold(k events.Kind) float64 {
	if g.cfg.Pipeline.Events == nil {
		return 0
	}
	ec := events.WithDefaults(*g.cfg.Pipeline.Events)
	pct := ec.DipPct
	switch k {
	case events.Swell:
		pct = ec.SwellPct
	case events.Interruption:
		pct = ec.InterruptionPct
	}
	return pct / 100 * g.setup.NominalV
}

// eventPayload is the …/event summary: site and gateway, then the event
// record's keys (DESIGN "Voltage events"); the waveform stays in the store.
func eventPayload(site, gw string, r *events.Record) []byte {
	b := append(appendHead(nil, site, gw), ',')
	ev := encode.AppendEvent(nil, r)
	return append(b, ev[1:]...)
}
