package gateway

import (
	"context"
	"errors"
	"fmt"
	"log/slog"
	"strings"
	"sync"
	"sync/atomic"
	"time"

	"github.com/gridloupe/gridloupe/metrics"
	"github.com/gridloupe/gridloupe/metrics/alarm"
	"github.com/gridloupe/gridloupe/metrics/events"
	"github.com/gridloupe/gridloupe/store"
	"github.com/gridloupe/gridloupe/stream"
	"github.com/gridloupe/gridloupe/stream/mqtt/topic"
)

// Config configures a Gateway. Zero values are documented per field.
type Config struct {
	Pipeline stream.Config      // the per-sample path; Pipeline.Setup is required
	Source   stream.FrameReader // required
	// Live marks a source that must never block: when the sink queue is
	// full its records are dropped and counted, and the next record of the
	// same level carries the flag gap. Replay and the simulator
	// leave it false and get back-pressure.
	Live bool
	// EndIsError says that the source ending is a failure (live sources,
	// the simulator): Run then returns ErrSourceEnded. Files end normally.
	EndIsError bool

	Store     Store            // required; a *store.DB
	Alarms    *alarm.Evaluator // nil = no alarm rules
	Telemetry []metrics.Interval
	Summary   []metrics.Interval // levels whose slim summary is published, retained (stream/summary)
	// SummaryCircuits: with circuits, the indices in Setup.Circuits of
	// those the summary carries; nil = every circuit.
	SummaryCircuits []int
	// TelemetryQoS is the MQTT QoS per telemetry level; a level absent
	// here is published at QoS 1 (deleted from the outbox on PUBACK).
	TelemetryQoS map[metrics.Interval]byte
	Base         string // topic base <prefix>/<site>/<gateway>; "" = nothing is queued for MQTT
	Site         string
	Gateway      string
	Kick         func() // wakes the publisher after messages were queued; nil = none

	CommitEvery time.Duration    // aggregate batch period (wall time); 0 = 60 s
	QueueLen    int              // records between the two goroutines; 0 = 256
	Now         func() time.Time // wall clock; nil = time.Now
	// Synced reports whether the wall clock is synchronised; retention
	// prunes only then, so age counts from synchronised time. nil = always.
	Synced func() bool
	Logger *slog.Logger

	// OnRecord and OnTransition are called from the store goroutine for
	// each aggregate record and alarm transition (the demo's live table).
	// They must not keep the record.
	OnRecord     func(r *metrics.Record, active []string)
	OnTransition func(t alarm.Transition)
	// OnEvent is called from the store goroutine with each stored voltage
	// event (Pipeline.Events turns detection on). nil = none.
	OnEvent func(r events.Record)
	// OnWindow is called on the measurement goroutine with each window
	// record (energy integration); it must not block, allocate or keep
	// the record. nil = none.
	OnWindow func(r *metrics.Record)
	// OnStoreError is called when a store write fails (the daemon puts it
	// in its MQTT status), and with nil when writes succeed again;
	// measurement goes on either way.
	OnStoreError func(err error)
	// PublishHealth publishes the health message directly, not through the
	// outbox (which a full store cannot take): *mqtt.Publisher.Direct. nil =
	// queue it in the outbox.
	PublishHealth func(topic string, payload []byte)
	// Notice is news from start-up (a damaged store set aside) that the
	// first health message carries; "" = none.
	Notice string
}

// Store is what the gateway needs of the bbolt store (*store.DB).
type Store interface {
	PutBatch(recs []*metrics.Record, msgs []store.Message) ([]uint64, error)
	NoteUnstored(recs []*metrics.Record, msgs []store.Message)
	LostRecords() map[metrics.Interval]uint64
	CommitAlarm(st store.AlarmState, msg store.Message) (uint64, error)
	SetAlarmState(st store.AlarmState) error
	Prune(now time.Time) (int, error)
	Query(iv metrics.Interval, from, to time.Time, fn func(r *metrics.Record) error) error
	Stats() store.Stats
	Losses() map[store.Class]uint64
}

// Stats are the gateway's counters, safe to read concurrently.
type Stats struct {
	Windows     uint64
	Aggregates  uint64 // 3 s, 10 min and 2 h records handled
	Stored      uint64 // records committed to the store
	Dropped     uint64 // records dropped by a live source's full queue
	Transitions uint64
	Queued      uint64 // messages queued in the outbox
	StoreErrors uint64
	EventsLost  uint64 // voltage events dropped by a live source's full event queue
}

// Health is what the health payload reports.
type Health struct {
	StoreBytes      int64
	Stored, Dropped uint64
	Losses          []ClassCount
	LostRecords     []ClassCount // per level: deleted by the size cap or never stored
	StoreErr        string
	Notice          string // Config.Notice, in the first health message only
}

// ClassCount is one outbox class's loss count.
type ClassCount struct {
	Class string
	N     uint64
}

// Gateway runs one source through the pipeline into the sinks. Run it once.
type Gateway struct {
	cfg   Config
	setup *metrics.Setup
	log   *slog.Logger
	now   func() time.Time
	names []string

	windows, aggregates, stored, dropped, transitions, queued, storeErrs atomic.Uint64
	eventsLost                                                           atomic.Uint64
	evq                                                                  chan eventItem // nil without event detection

	// owned by the store goroutine
	batch    []*metrics.Record
	msgs     []store.Message
	trans    []alarm.Transition
	lastErr  string
	alarmQ   []pendingAlarm // transitions whose commit failed, retried in order
	telem    [5]bool
	summ     [5]bool
	persistS map[string]alarm.State
}

// New checks cfg.
func New(cfg Config) (*Gateway, error) {
	if cfg.Pipeline.Setup == nil || cfg.Source == nil || cfg.Store == nil {
		return nil, fmt.Errorf("%w: setup, source and store are required", ErrConfig)
	}
	g := &Gateway{cfg: cfg, setup: cfg.Pipeline.Setup, log: cfg.Logger, now: cfg.Now}
	if g.log == nil {
		g.log = slog.New(slog.DiscardHandler)
	}
	if g.now == nil {
		g.now = time.Now
	}
	if g.cfg.CommitEvery <= 0 {
		g.cfg.CommitEvery = 60 * time.Second
	}
	if g.cfg.QueueLen <= 0 {
		g.cfg.QueueLen = 256
	}
	for _, ch := range g.setup.Channels { // for alarm payloads
		g.names = append(g.names, ch.Name)
	}
	for _, iv := range cfg.Telemetry {
		if int(iv) < len(g.telem) {
			g.telem[iv] = true
		}
	}
	for _, iv := range cfg.Summary {
		if int(iv) < len(g.summ) {
			g.summ[iv] = true
		}
	}
	g.persistS = map[string]alarm.State{}
	if cfg.Alarms != nil {
		for k, v := range cfg.Alarms.States() {
			g.persistS[k] = v
		}
	}
	return g, nil
}

// Stats returns the counters.
func (g *Gateway) Stats() Stats {
	return Stats{Windows: g.windows.Load(), Aggregates: g.aggregates.Load(), Stored: g.stored.Load(),
		Dropped: g.dropped.Load(), Transitions: g.transitions.Load(), Queued: g.queued.Load(), StoreErrors: g.storeErrs.Load(),
		EventsLost: g.eventsLost.Load()}
}

// Run measures until the source ends or ctx is cancelled, then drains the
// queue, emits the open intervals flagged partial, and commits the last
// batch. It returns nil on cancellation and on the normal end of a file,
// ErrSourceEnded (wrapping the reason) when a live or simulated source
// stops, and the pipeline's error otherwise.
func (g *Gateway) Run(ctx context.Context) error {
	pc := g.cfg.Pipeline
	if pc.Events != nil {
		es := newEventSink(&pc, g.setup, g.cfg.Live, &g.eventsLost)
		pc.EventSink, g.evq = es, es.q
	}
	p, err := stream.New(pc)
	if err != nil {
		return err
	}
	iv := stream.NewIntervals(g.setup, metrics.Int3s, metrics.Int10min, metrics.Int2h)
	g.seed2h(iv)
	q := make(chan *metrics.Record, g.cfg.QueueLen)
	var wg sync.WaitGroup
	wg.Add(1)
	go func() {
		defer wg.Done()
		g.sink(q)
	}()
	var drops liveDrops
	send := func(r *metrics.Record) error {
		c := r.Clone()
		if g.cfg.Live {
			if !drops.offer(q, c) {
				g.dropped.Add(1)
			}
			return nil
		}
		q <- c
		return nil
	}
	runErr := p.Run(ctx, g.cfg.Source, func(r *metrics.Record) error {
		g.windows.Add(1)
		if g.cfg.OnWindow != nil {
			g.cfg.OnWindow(r)
		}
		return iv.Add(r, send)
	})
	// the open 2 h value stays open: the next run reseeds it from the store
	if err := iv.Suspend(send); err != nil && runErr == nil {
		runErr = err
	}
	if g.evq != nil {
		close(g.evq)
	}
	close(q)
	wg.Wait()
	switch {
	case runErr != nil:
		if errors.Is(runErr, stream.ErrSource) && g.cfg.EndIsError {
			return fmt.Errorf("%w: %w", ErrSourceEnded, runErr)
		}
		return runErr
	case ctx.Err() != nil:
		return nil
	case g.cfg.EndIsError:
		return fmt.Errorf("%w: end of data after %d samples", ErrSourceEnded, p.Samples())
	}
	return nil
}

// sink owns every store write.
func (g *Gateway) sink(q <-chan *metrics.Record) {
	tick := time.NewTicker(g.cfg.CommitEvery)
	defer tick.Stop()
	lastPrune := g.now()
	evq := g.evq
	for {
		select {
		case r, ok := <-q:
			if !ok {
				if evq != nil {
					for it := range evq {
						g.storeEvent(it)
					}
				}
				g.commit()
				return
			}
			// Every event the pipeline reported before this record is in
			// evq already (one goroutine sends both, events first): take
			// them first, so the event rules see events and records in
			// the pipeline's order.
			for drained := false; evq != nil && !drained; {
				select {
				case it, ok := <-evq:
					if !ok {
						evq = nil
						break
					}
					g.storeEvent(it)
				default:
					drained = true
				}
			}
			g.handle(r)
		case it, ok := <-evq:
			if !ok {
				evq = nil // closed: the pipeline is done, q closes next
				continue
			}
			g.storeEvent(it)
		case <-tick.C:
			g.commit()
			if g.cfg.Synced != nil && !g.cfg.Synced() {
				continue
			}
			if now := g.now(); now.Sub(lastPrune) >= time.Hour || now.Before(lastPrune) {
				lastPrune = now
				if n, err := g.cfg.Store.Prune(now); err != nil {
					g.storeError(err)
				} else if n > 0 {
					g.log.Info("retention pruned records", "deleted", n)
				}
			}
		}
	}
}

// maxBatch bounds the aggregates held between commits: in real time a
// 60 s batch holds about 20 records, but an accelerated simulator or a
// replay produces them far faster, and memory must stay flat.
const maxBatch = 32

// handle processes one aggregate record.
func (g *Gateway) handle(r *metrics.Record) {
	g.aggregates.Add(1)
	g.batch = append(g.batch, r)
	defer func() {
		if len(g.batch) >= maxBatch {
			g.commit()
		}
	}()
	g.evaluate(r)
	if g.cfg.Base != "" && int(r.Interval) < len(g.telem) && g.telem[r.Interval] {
		g.msgs = append(g.msgs, store.Message{Class: telemetryClass(r.Interval), QoS: g.telemetryQoS(r.Interval),
			Topic:   topic.Telemetry(g.cfg.Base, r.Interval.String()),
			Payload: telemetryPayload(nil, g.cfg.Site, g.cfg.Gateway, g.setup, r)})
	}
	if g.cfg.Base != "" && int(r.Interval) < len(g.summ) && g.summ[r.Interval] {
		g.msgs = append(g.msgs, summaryMessage(g.cfg.Base, g.cfg.Site, g.cfg.Gateway, g.setup, g.cfg.SummaryCircuits, r))
	}
	if g.cfg.OnRecord != nil {
		var active []string
		if g.cfg.Alarms != nil {
			active = g.cfg.Alarms.Active()
		}
		g.cfg.OnRecord(r, active)
	}
	if r.Interval == metrics.Int10min {
		if g.cfg.Base != "" {
			g.health(r.Start.Add(time.Duration(r.DurationS * float64(time.Second))))
		}
	}
}

// evaluate runs the alarm rules; each transition commits at once together
// with its outbox entry.
func (g *Gateway) evaluate(r *metrics.Record) {
	if g.cfg.Alarms == nil {
		return
	}
	g.trans = g.cfg.Alarms.Evaluate(r, g.trans[:0])
	g.transitionsDone()
}

// transitionsDone commits each transition in g.trans at once together
// with its outbox entry, logs it and reports it.
func (g *Gateway) transitionsDone() {
	if len(g.trans) == 0 {
		return
	}
	states := g.cfg.Alarms.States()
	for _, t := range g.trans {
		g.transitions.Add(1)
		st := states[t.Rule]
		ch := g.ruleChannel(t.Rule)
		msg := store.Message{Class: store.ClassAlarm, QoS: 1,
			Topic: topic.Alarm(g.cfg.Base), Payload: alarmPayload(g.cfg.Site, g.cfg.Gateway, t, ch)}
		g.commitAlarm(pendingAlarm{st: toStore(t.Rule, st, t.Severity), msg: msg, withMsg: g.cfg.Base != ""})
		state := "cleared"
		if t.Raised {
			state = "raised"
		}
		if t.Metric == alarm.MetricEvent {
			id := "" // a clear after a restart: the event is not known
			if t.Event != nil {
				id = t.Event.ID
			}
			g.log.Warn("alarm", "alarm", t.Rule, "state", state, "event", id, "value", t.Value, "threshold", t.Threshold)
		} else {
			g.log.Warn("alarm", "alarm", t.Rule, "state", state, "value", t.Value, "threshold", t.Threshold, "level", t.Level.String())
		}
		if g.cfg.OnTransition != nil {
			g.cfg.OnTransition(t)
		}
	}
}

// pendingAlarm is an alarm transition waiting to be committed.
type pendingAlarm struct {
	st      store.AlarmState
	msg     store.Message
	withMsg bool
}

// commitAlarm commits a transition with its outbox entry at once. When the
// store fails, the transition is kept and retried, in order, at the next
// commit: none is lost while the process runs.
func (g *Gateway) commitAlarm(a pendingAlarm) {
	if len(g.alarmQ) > 0 { // keep order behind earlier failures
		g.alarmQ = append(g.alarmQ, a)
		return
	}
	if err := g.tryAlarm(a); err != nil {
		g.storeError(err)
		g.alarmQ = append(g.alarmQ, a)
	}
}

func (g *Gateway) tryAlarm(a pendingAlarm) error {
	if !a.withMsg {
		return g.cfg.Store.SetAlarmState(a.st)
	}
	if _, err := g.cfg.Store.CommitAlarm(a.st, a.msg); err != nil {
		return err
	}
	g.queued.Add(1)
	g.kick()
	g.persistS[a.st.Name] = alarm.State{Raised: a.st.Raised, Since: a.st.Since, Pending: a.st.Pending,
		PendingSince: a.st.PendingSince, Value: a.st.Value}
	return nil
}

// retryAlarms commits the transitions kept after store failures, in order.
func (g *Gateway) retryAlarms() {
	for len(g.alarmQ) > 0 {
		if err := g.tryAlarm(g.alarmQ[0]); err != nil {
			g.storeError(err)
			return
		}
		g.alarmQ[0] = pendingAlarm{}
		g.alarmQ = g.alarmQ[1:]
	}
}

// ruleChannel returns the channel name an alarm rule watches, if any.
func (g *Gateway) ruleChannel(rule string) string {
	return g.cfg.Alarms.Channel(rule, g.names)
}

func toStore(name string, st alarm.State, sev string) store.AlarmState {
	return store.AlarmState{Name: name, Raised: st.Raised, Since: st.Since, Value: st.Value,
		Severity: sev, Pending: st.Pending, PendingSince: st.PendingSince, Baseline: baselineJSON(st.Learned)}
}

// FromStore converts persisted alarm states for alarm.New.
func FromStore(m map[string]store.AlarmState) map[string]alarm.State {
	out := make(map[string]alarm.State, len(m))
	for k, v := range m {
		out[k] = alarm.State{Raised: v.Raised, Since: v.Since, Pending: v.Pending, PendingSince: v.PendingSince, Value: v.Value,
			Learned: learnedFrom(v.Baseline)}
	}
	return out
}

// commit writes the batch of aggregates, queues the telemetry, and
// persists pending-delay changes of the alarm states.
func (g *Gateway) commit() {
	g.retryAlarms()
	if len(g.batch) > 0 || len(g.msgs) > 0 {
		// One transaction: after a crash the file holds a record and its
		// telemetry message both or neither.
		if _, err := g.cfg.Store.PutBatch(g.batch, g.msgs); err != nil {
			g.storeError(err)
			g.cfg.Store.NoteUnstored(g.batch, g.msgs) // counted, persisted later, published in health
		} else {
			g.stored.Add(uint64(len(g.batch)))
			if len(g.msgs) > 0 {
				g.queued.Add(uint64(len(g.msgs)))
				g.kick()
			}
			g.clearErr()
		}
		clear(g.batch) // drop the references so the records can be collected
		g.batch = g.batch[:0]
		clear(g.msgs)
		g.msgs = g.msgs[:0]
	}
	if g.cfg.Alarms != nil && len(g.alarmQ) == 0 { // after the transitions, never before them
		for name, st := range g.cfg.Alarms.States() {
			if old, ok := g.persistS[name]; ok && old == st {
				continue
			}
			if err := g.cfg.Store.SetAlarmState(toStore(name, st, "")); err != nil {
				g.storeError(err)
				continue
			}
			g.persistS[name] = st
		}
	}
}

// healthClasses are the outbox classes the health message counts, in order.
var healthClasses = []store.Class{store.ClassTelemetry, store.ClassTelemetryCoarse, store.ClassSummary,
	store.ClassEventWaveform, store.ClassEvent, store.ClassAlarm}

// health builds the health message (store size, losses, last store error)
// with every 10 min record, from counters in memory, and publishes it
// directly (Config.PublishHealth), so a full store cannot hold it back; its
// time is the record's end on the sample clock, the clock of every message.
func (g *Gateway) health(at time.Time) {
	st := g.cfg.Store.Stats()
	h := Health{StoreBytes: st.FileBytes, Stored: g.stored.Load(), Dropped: g.dropped.Load(), StoreErr: g.lastErr, Notice: g.cfg.Notice}
	g.cfg.Notice = ""
	losses := g.cfg.Store.Losses()
	for _, c := range healthClasses {
		h.Losses = append(h.Losses, ClassCount{c.String(), losses[c]})
	}
	lost := g.cfg.Store.LostRecords()
	for _, l := range []metrics.Interval{metrics.Int3s, metrics.Int10min, metrics.Int2h} {
		h.LostRecords = append(h.LostRecords, ClassCount{l.String(), lost[l]})
	}
	tp, payload := topic.Health(g.cfg.Base), healthPayload(g.cfg.Site, g.cfg.Gateway, at, h)
	if g.cfg.PublishHealth != nil {
		g.cfg.PublishHealth(tp, payload)
		return
	}
	g.msgs = append(g.msgs, store.Message{Class: store.ClassEvent, QoS: 1, Topic: tp, Payload: payload})
}

// telemetryClass is the outbox class of a level's telemetry: the finest
// level is given up first under the size cap.
func telemetryClass(iv metrics.Interval) store.Class {
	if iv <= metrics.Int3s {
		return store.ClassTelemetry
	}
	return store.ClassTelemetryCoarse
}

// ProblemText is a store error as the status and health report it: with
// one "store: " in front, however often the wrapped errors repeat it.
func ProblemText(err error) string {
	const p = "store: "
	return p + strings.ReplaceAll(err.Error(), p, "")
}

func (g *Gateway) storeError(err error) {
	g.storeErrs.Add(1)
	msg := ProblemText(err)
	if msg != g.lastErr { // log each new error once, not every batch
		g.log.Error("store write failed; measuring goes on", "err", err)
	}
	g.lastErr = msg
	if g.cfg.OnStoreError != nil {
		g.cfg.OnStoreError(err)
	}
}

func (g *Gateway) clearErr() {
	if g.lastErr != "" {
		g.log.Info("store writes recovered")
		g.lastErr = ""
		if g.cfg.OnStoreError != nil {
			g.cfg.OnStoreError(nil)
		}
	}
}

func (g *Gateway) kick() {
	if g.cfg.Kick != nil {
		g.cfg.Kick()
	}
}

// DefaultTelemetryQoS is the QoS of a telemetry level Config.TelemetryQoS
// does not name: 1, so a message in flight when the broker goes away is
// resent rather than deleted as delivered.
const DefaultTelemetryQoS = 1

func (g *Gateway) telemetryQoS(iv metrics.Interval) byte {
	if q, ok := g.cfg.TelemetryQoS[iv]; ok {
		return q
	}
	return DefaultTelemetryQoS
}
