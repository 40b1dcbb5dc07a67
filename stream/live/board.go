package live

import (
	"slices"
	"sync"
	"time"

	"github.com/gridloupe/gridloupe/metrics"
	"github.com/gridloupe/gridloupe/metrics/energy"
)

// Levels are the aggregation levels the board keeps, in order.
var levels = [...]metrics.Interval{metrics.Int3s, metrics.Int10min}

// Levels returns the levels the board keeps: 3 s and 10 min.
func Levels() []metrics.Interval { return levels[:] }

// Health is the gateway's own state as the servers report it.
type Health struct {
	RecordsStored  uint64 // aggregates committed to the store
	RecordsDropped uint64 // aggregates a live source's full queue dropped
	OutboxDepth    int    // messages waiting in the MQTT outbox
	StoreBytes     int64  // store file size
	StoreErrors    uint64 // store writes that failed since start
	Windows        uint64 // measurement windows computed
	MQTTConnected  bool
}

// Event is one stored voltage event as the status page lists it.
type Event struct {
	Kind       string // dip, swell or interruption
	Start      time.Time
	DurationS  float64
	ExtremePct float64 // residual (dips, interruptions) or maximum (swells), % of declared voltage
	Channels   []string
}

// Board is the latest state. Records handed out by Latest are never
// modified afterwards (Put stores a copy and replaces it), so a reader may
// keep one. A Board is safe for concurrent use.
type Board struct {
	setup *metrics.Setup
	now   func() time.Time

	mu     sync.RWMutex
	recs   [len(levels)]*metrics.Record
	at     [len(levels)]time.Time
	active []string
	health func() Health
	events []Event
	why    string // why the event list is empty, when it is
	energy Energy
}

// New returns an empty board for records of setup s. now is the wall clock
// (nil = time.Now); health, when not nil, is called for each Health.
func New(s *metrics.Setup, now func() time.Time, health func() Health) *Board {
	if now == nil {
		now = time.Now
	}
	return &Board{setup: s, now: now, health: health, why: "no voltage dip, swell or interruption stored"}
}

// Setup returns the layout of the records.
func (b *Board) Setup() *metrics.Setup { return b.setup }

// Now returns the board's wall clock.
func (b *Board) Now() time.Time { return b.now() }

func levelIndex(iv metrics.Interval) int {
	return slices.Index(levels[:], iv)
}

// Put records r (3 s or 10 min; other levels are ignored) and the alarms
// active after it. It copies r.
func (b *Board) Put(r *metrics.Record, active []string) {
	i := levelIndex(r.Interval)
	if i < 0 {
		return
	}
	c := r.Clone()
	act := slices.Clone(active)
	now := b.now()
	b.mu.Lock()
	b.recs[i], b.at[i] = c, now
	b.active = act
	b.mu.Unlock()
}

// Latest returns the newest record of level iv and the wall time it
// arrived; nil before the first one. The caller must not modify it.
func (b *Board) Latest(iv metrics.Interval) (*metrics.Record, time.Time) {
	i := levelIndex(iv)
	if i < 0 {
		return nil, time.Time{}
	}
	b.mu.RLock()
	defer b.mu.RUnlock()
	return b.recs[i], b.at[i]
}

// Age returns the seconds since the newest record of level iv arrived,
// and false before the first one.
func (b *Board) Age(iv metrics.Interval) (float64, bool) {
	r, at := b.Latest(iv)
	if r == nil {
		return 0, false
	}
	return b.now().Sub(at).Seconds(), true
}

// Active returns the names of the raised alarms.
func (b *Board) Active() []string {
	b.mu.RLock()
	defer b.mu.RUnlock()
	return slices.Clone(b.active)
}

// Health returns the gateway's health (zero without a health function).
func (b *Board) Health() Health {
	if b.health == nil {
		return Health{}
	}
	return b.health()
}

// SetEvents replaces the list of recent events (newest first). why says,
// when the list is empty, why it is (shown instead of the list).
func (b *Board) SetEvents(ev []Event, why string) {
	b.mu.Lock()
	b.events, b.why = slices.Clone(ev), why
	b.mu.Unlock()
}

// Events returns the recent events and, when there are none, why.
func (b *Board) Events() ([]Event, string) {
	b.mu.RLock()
	defer b.mu.RUnlock()
	return slices.Clone(b.events), b.why
}

// Energy is the energy and demand state the servers expose.
type Energy struct {
	Readings []energy.Reading
	Demand   energy.Demand
	ILConfig float64   // il_a from the config, A; 0 = unset
	Estimate energy.IL // IL estimated from the stored monthly maxima
	Valid    bool      // set once the gateway has published energy state
}

// SetEnergy replaces the energy and demand state.
func (b *Board) SetEnergy(e Energy) {
	e.Readings = slices.Clone(e.Readings)
	e.Valid = true
	b.mu.Lock()
	b.energy = e
	b.mu.Unlock()
}

// Energy returns the energy and demand state (Valid false before the first).
func (b *Board) Energy() Energy {
	b.mu.RLock()
	defer b.mu.RUnlock()
	e := b.energy
	e.Readings = slices.Clone(e.Readings)
	return e
}
