package gateway

import (
	"github.com/gridloupe/gridloupe/metrics"
	"github.com/gridloupe/gridloupe/store"
	"github.com/gridloupe/gridloupe/stream/mqtt/topic"
	"github.com/gridloupe/gridloupe/stream/summary"
)

// summaryMessage is the retained QoS 1 summary of record r with the
// circuits at pick (nil = all; see summary.FromCircuits). Its class is
// telemetry: while the uplink is down, old summaries are the first to go,
// and only the newest matters to a retained topic.
func summaryMessage(base, site, gw string, s *metrics.Setup, pick []int, r *metrics.Record) store.Message {
	sm := summary.FromCircuits(s, r, pick)
	return store.Message{Class: store.ClassSummary, QoS: 1, Retain: true,
		Topic: topic.Summary(base, r.Interval.String()), Payload: sm.AppendJSON(nil, site, gw)}
}
