package main

import (
	"log/slog"
	"slices"
	"strconv"
	"time"

	"github.com/gridloupe/gridloupe/config"
	"github.com/gridloupe/gridloupe/metrics"
	"github.com/gridloupe/gridloupe/metrics/energy"
	"github.com/gridloupe/gridloupe/metrics/events"
	"github.com/gridloupe/gridloupe/metrics/harmdiag"
	"github.com/gridloupe/gridloupe/store"
	"github.com/gridloupe/gridloupe/stream/encode"
	"github.com/gridloupe/gridloupe/stream/live"
	"github.com/gridloupe/gridloupe/stream/mqtt/topic"
)

// energyCircuits are the circuits energy is counted for: the configured
// circuits in config order, else the whole metered point.
func energyCircuits(cfg *config.Config) []string {
	if len(cfg.Circuits) == 0 {
		return []string{energy.DefaultCircuit}
	}
	names := make([]string, len(cfg.Circuits))
	for i, c := range cfg.Circuits {
		names[i] = c.Name
	}
	return names
}

// energyKeeper integrates energy per window (on the measurement goroutine)
// and computes demand, persists both and publishes them (on the store
// goroutine, from the gateway's OnRecord).
type energyKeeper struct {
	setup   *metrics.Setup
	meter   *energy.Meter
	demand  *energy.Demander
	db      *store.DB
	board   *live.Board
	log     *slog.Logger
	every   time.Duration
	last    time.Time
	ilCfg   float64
	iv      time.Duration
	base    string // MQTT topic base; "" = not published
	site    string
	gateway string
	kick    func()
	evAt    time.Time // wall time the event list was last read
}

// eventsEvery is how often the status page's event list is re-read from
// the store (a read transaction; common practice, no source).
const eventsEvery = 15 * time.Second

// maxPageEvents is how many recent events the status page lists.
const maxPageEvents = 10

// refreshEvents puts the newest stored events on the board, at most every
// eventsEvery.
func (k *energyKeeper) refreshEvents() {
	now := time.Now()
	if now.Sub(k.evAt) < eventsEvery && !now.Before(k.evAt) {
		return
	}
	k.evAt = now
	var list []live.Event
	err := k.db.Events(time.Time{}, time.Time{}, func(e events.Record) error {
		list = append(list, live.Event{Kind: e.Kind.String(), Start: e.Start, DurationS: e.DurationS, ExtremePct: e.ExtremePct, Channels: e.Channels})
		if len(list) > 4*maxPageEvents {
			list = list[len(list)-maxPageEvents:]
		}
		return nil
	})
	if err != nil {
		k.log.Warn("events not read for the status page", "err", err)
		return
	}
	if len(list) > maxPageEvents {
		list = list[len(list)-maxPageEvents:]
	}
	slices.Reverse(list)
	k.board.SetEvents(list, "no voltage dip, swell or interruption stored")
}

func newEnergyKeeper(cfg *config.Config, setup *metrics.Setup, db *store.DB, board *live.Board, base string, kick func(), log *slog.Logger) (*energyKeeper, error) {
	stored, err := db.Energy()
	if err != nil {
		return nil, err
	}
	var restored []energy.Reading
	for _, e := range stored {
		restored = append(restored, energy.Reading{Circuit: e.Circuit, Counters: energy.Counters{ImportWh: e.ImportWh, ExportWh: e.ExportWh, VarhQ: e.VarhQ}})
	}
	sm, err := db.DemandMonths()
	if err != nil {
		return nil, err
	}
	months := make([]energy.Month, len(sm))
	for i, m := range sm {
		months[i] = energy.Month{Month: m.Month, MaxA: m.MaxA, MaxW: m.MaxW, At: m.At}
	}
	method := energy.Fixed
	if cfg.Demand.Method == config.DemandSliding {
		method = energy.Sliding
	}
	dm, err := energy.NewDemander(setup, cfg.Demand.Interval, method, months)
	if err != nil {
		return nil, usagef("%s: demand: %v", cfg.Path, err)
	}
	k := &energyKeeper{setup: setup, meter: energy.NewMeter(energyCircuits(cfg), restored), demand: dm, db: db, board: board,
		log: log, every: cfg.Store.CommitEvery, ilCfg: cfg.ILA, iv: cfg.Demand.Interval, base: base,
		site: cfg.Site, gateway: cfg.Gateway, kick: kick}
	if len(restored) > 0 {
		log.Info("energy counters restored", "circuits", len(restored), "import_kwh", restored[0].ImportWh/1000)
	}
	k.publishBoard(time.Now())
	return k, nil
}

// window is the gateway's OnWindow hook.
func (k *energyKeeper) window(r *metrics.Record) { k.meter.Window(r) }

// record takes each aggregate on the store goroutine.
func (k *energyKeeper) record(r *metrics.Record) {
	end := r.Start.Add(time.Duration(r.DurationS * float64(time.Second)))
	switch r.Interval {
	case metrics.Int3s:
		k.demand.Add(r)
		k.publishBoard(end)
		k.refreshEvents()
		if now := time.Now(); now.Sub(k.last) >= k.every || now.Before(k.last) {
			k.last = now
			k.save()
		}
	case metrics.Int10min:
		if k.base != "" {
			if _, err := k.db.Enqueue(store.Message{Class: store.ClassTelemetry, QoS: 1, Topic: topic.Diagnostics(k.base),
				Payload: k.diagnostics(r, end)}); err != nil {
				k.log.Warn("diagnostics message not queued", "err", err)
			}
			if _, err := k.db.Enqueue(store.Message{Class: store.ClassTelemetry, QoS: 1, Topic: topic.Energy(k.base),
				Payload: k.payload(end)}); err != nil {
				k.log.Warn("energy message not queued", "err", err)
			} else if k.kick != nil {
				k.kick()
			}
		}
	}
}

func (k *energyKeeper) state(now time.Time) live.Energy {
	return live.Energy{Readings: k.meter.Readings(), Demand: k.demand.Demand(), ILConfig: k.ilCfg,
		Estimate: energy.EstimateIL(k.demand.Months(), now, k.iv)}
}

func (k *energyKeeper) publishBoard(now time.Time) { k.board.SetEnergy(k.state(now)) }

// save persists the counters and monthly maxima. A failure is logged and
// retried at the next save; the counters in memory go on.
func (k *energyKeeper) save() {
	var es []store.Energy
	for _, r := range k.meter.Readings() {
		es = append(es, store.Energy{Circuit: r.Circuit, ImportWh: r.ImportWh, ExportWh: r.ExportWh, VarhQ: r.VarhQ})
	}
	var ms []store.DemandMonth
	for _, m := range k.demand.Months() {
		ms = append(ms, store.DemandMonth{Month: m.Month, MaxA: m.MaxA, MaxW: m.MaxW, At: m.At})
	}
	if err := k.db.PutEnergy(es, ms); err != nil {
		k.log.Warn("energy counters not saved; retried at the next save", "err", err)
	}
}

// payload is the …/energy message: counters per circuit, demand, IL.
func (k *energyKeeper) payload(now time.Time) []byte {
	b := []byte(`{"site":`)
	b = encode.AppendString(b, k.site)
	b = append(b, `,"gateway":`...)
	b = encode.AppendString(b, k.gateway)
	b = append(b, `,"time":"`...)
	b = encode.AppendTime(b, now)
	b = append(b, `",`...)
	body := live.AppendEnergyJSON(nil, k.state(now))
	b = append(b, body[1:]...)
	return b
}

// minDirPct: orders below this share of the fundamental carry angles too
// noisy to give a direction (the report uses the same bound).
const minDirPct = 0.5

// diagnostics is the …/diagnostics message of one 10 min record: each
// current harmonic's active power and direction, and the record's load
// point (mean phase fundamental current, its bin, TDD) for the ageing
// indicator.
func (k *energyKeeper) diagnostics(r *metrics.Record, end time.Time) []byte {
	b := []byte(`{"site":`)
	b = encode.AppendString(b, k.site)
	b = append(b, `,"gateway":`...)
	b = encode.AppendString(b, k.gateway)
	b = append(b, `,"time":"`...)
	b = encode.AppendTime(b, end)
	b = append(b, `","level":"10min","harmonic_power":[`...)
	dirs := harmdiag.NewDirections(k.setup)
	dirs.Add(r)
	n := 0
	for _, d := range dirs.Result() {
		if d.Records == 0 || !(d.MeanIPct >= minDirPct) {
			continue
		}
		if n > 0 {
			b = append(b, ',')
		}
		n++
		b = append(b, `{"h":`...)
		b = strconv.AppendInt(b, int64(d.H), 10)
		b = append(b, `,"p_w":`...)
		b = encode.AppendNumber(b, d.MeanW)
		b = append(b, `,"i_pct":`...)
		b = encode.AppendNumber(b, d.MeanIPct)
		b = append(b, `,"direction":"`...)
		b = append(b, harmdiag.Sense(d.MeanW, d.MeanVI)...)
		b = append(b, `"}`...)
	}
	b = append(b, `],"load":`...)
	i1, tdd, ok := harmdiag.Load(k.setup, r)
	ref := k.ilCfg
	if !ok || !(ref > 0) {
		return append(b, "null}"...)
	}
	b = append(b, `{"i1_a":`...)
	b = encode.AppendNumber(b, i1)
	b = append(b, `,"bin_pct":`...)
	b = strconv.AppendInt(b, int64(100*i1/ref/harmdiag.BinPct)*harmdiag.BinPct, 10)
	b = append(b, `,"tdd_pct":`...)
	b = encode.AppendNumber(b, tdd)
	return append(b, "}}"...)
}
