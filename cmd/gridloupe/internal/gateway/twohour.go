package gateway

import (
	"time"

	"github.com/gridloupe/gridloupe/metrics"
	"github.com/gridloupe/gridloupe/stream"
)

// seed2h reloads the 10 min records of the current 2 h clock interval from
// the store into iv, so a restart mid-interval loses none of them. When
// the interval's 2 h value is already stored (the previous run closed it
// in the last slot), its later 10 min values are not aggregated again. The
// 2 h aggregation itself is stream.Intervals'. It runs before the store
// goroutine starts, so a 2 h value the seed completes is handled here.
func (g *Gateway) seed2h(iv *stream.Intervals) {
	base := g.cfg.Pipeline.Base
	if base.IsZero() {
		return
	}
	from := time.Unix(0, stream.Tick(base, 2*time.Hour)*int64(2*time.Hour)).UTC()
	closed := false
	if err := g.cfg.Store.Query(metrics.Int2h, from, base.Add(time.Nanosecond), func(*metrics.Record) error {
		closed = true
		return nil
	}); err != nil {
		g.log.Warn("cannot read stored 2 h values; the current one may be incomplete", "err", err)
	}
	if closed {
		iv.SkipTwoHour(base)
		return
	}
	var seed []*metrics.Record
	if err := g.cfg.Store.Query(metrics.Int10min, from, base, func(r *metrics.Record) error {
		seed = append(seed, r)
		return nil
	}); err != nil {
		g.log.Warn("cannot read stored 10 min values; the current 2 h value will be partial", "err", err)
	}
	for _, r := range seed { // outside the read transactions: handle may write
		_ = iv.Seed(r, func(r *metrics.Record) error {
			g.handle(r.Clone())
			return nil
		})
	}
}
