package gateway

import "github.com/gridloupe/gridloupe/metrics"

// liveDrops remembers, per interval level, that a live source's record was
// dropped because the sink queue was full, so that the next record of that
// level that gets through carries the flag gap: the stored series then
// shows the hole instead of stitching across it (DESIGN "Sources").
type liveDrops [8]bool

// offer queues r without blocking; it reports whether r was queued.
func (d *liveDrops) offer(q chan<- *metrics.Record, r *metrics.Record) bool {
	lvl := int(r.Interval) % len(d)
	if d[lvl] {
		r.Flags |= metrics.FlagGap
	}
	select {
	case q <- r:
		d[lvl] = false
		return true
	default:
		d[lvl] = true
		return false
	}
}
