package gateway

import (
	"time"

	"github.com/gridloupe/gridloupe/metrics"
	"github.com/gridloupe/gridloupe/stream"
)

const twoHours = 2 * time.Hour

// per2h is the number of 10 min values in a 2 h value (IEC 61000-4-30).
const per2h = 12

func tick2hOf(t time.Time) int64 { return stream.Tick(t, twoHours) }

// seed2h reloads the 10 min records of the current 2 h clock interval
// from the store, so a restart mid-interval loses none of them. When the
// interval's 2 h value is already stored (the previous run closed it in
// the last slot), its later 10 min values are not aggregated again.
func (g *Gateway) seed2h() {
	base := g.cfg.Pipeline.Base
	if base.IsZero() {
		return
	}
	tick := tick2hOf(base)
	from := time.Unix(0, tick*int64(twoHours)).UTC()
	closed := false
	if err := g.cfg.Store.Query(metrics.Int2h, from, base.Add(time.Nanosecond), func(*metrics.Record) error {
		closed = true
		return nil
	}); err != nil {
		g.log.Warn("cannot read stored 2 h values; the current one may be incomplete", "err", err)
	}
	if closed {
		g.done2h = tick
		return
	}
	var seed []*metrics.Record
	if err := g.cfg.Store.Query(metrics.Int10min, from, base, func(r *metrics.Record) error {
		seed = append(seed, r)
		return nil
	}); err != nil {
		g.log.Warn("cannot read stored 10 min values; the current 2 h value will be partial", "err", err)
	}
	for _, r := range seed { // outside the read transactions: add2h may write
		g.add2h(r)
	}
}

// add2h adds a 10 min record to its 2 h interval, emitting the previous
// interval when the record opens a new one.
func (g *Gateway) add2h(r *metrics.Record) {
	tick := tick2hOf(r.Start)
	if tick == g.done2h {
		return // its 2 h value was stored before a restart
	}
	if g.n2h > 0 && tick != g.tick2h {
		g.close2h(false)
	}
	if g.n2h == 0 {
		g.tick2h = tick
		g.start2h = r.Start
		g.full2h = g.seen2h || r.Start.UnixNano()%int64(twoHours) == 0
		g.seen2h = true
	}
	g.a2h.Add(r)
	g.n2h++
	// The 10 min value in the interval's last slot closes it. (Counting to
	// twelve would close too early after a restart mid-interval, when the
	// slot cut by the restart holds two partial 10 min values.)
	end := time.Unix(0, (tick+1)*int64(twoHours))
	if !r.Start.Add(10 * time.Minute).Before(end) {
		g.close2h(false)
	}
}

// close2h emits the open 2 h value, flagged partial unless it holds twelve
// 10 min values of an interval seen from its start. At the end of a run the
// open interval is not emitted: the next run reseeds it from the store.
func (g *Gateway) close2h(atEnd bool) {
	if g.n2h == 0 {
		return
	}
	full := g.full2h && g.n2h == per2h
	if atEnd {
		// keep it open: the next run reseeds it from the store
		g.a2h.Reset()
		g.n2h = 0
		return
	}
	g.a2h.Result(g.rec2h)
	g.rec2h.Interval = metrics.Int2h
	g.rec2h.Start = g.start2h
	if !full {
		g.rec2h.Flags |= metrics.FlagPartial
	}
	g.a2h.Reset()
	g.n2h = 0
	g.handle(g.rec2h.Clone())
}
