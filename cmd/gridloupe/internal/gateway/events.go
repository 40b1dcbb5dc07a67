package gateway

import (
	"sync/atomic"

	"github.com/gridloupe/gridloupe/metrics"
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

// eventItem is one finished event on its way to the store goroutine.
type eventItem struct {
	rec  events.Record
	wave []byte
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
	return nil
}

func (s *eventSink) Event(e *stream.VoltageEvent) error {
	it := eventItem{rec: e.Record, wave: s.waves[e.ID]}
	delete(s.waves, e.ID)
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
// …/event (QoS 1; the publisher puts seq first), in one transaction.
func (g *Gateway) storeEvent(it eventItem) {
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

// eventPayload is the …/event summary: site and gateway, then the event
// record's keys (DESIGN "Voltage events"); the waveform stays in the store.
func eventPayload(site, gw string, r *events.Record) []byte {
	b := []byte(`{"site":`)
	b = encode.AppendString(b, site)
	b = append(b, `,"gateway":`...)
	b = encode.AppendString(b, gw)
	b = append(b, ',')
	ev := encode.AppendEvent(nil, r)
	return append(b, ev[1:]...)
}
