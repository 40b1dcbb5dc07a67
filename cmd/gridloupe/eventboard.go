package main

import (
	"github.com/gridloupe/gridloupe/metrics/events"
	"github.com/gridloupe/gridloupe/stream/live"
)

// boardEvents is how many recent events the status page lists.
const boardEvents = 10

// onEvent is the gateway's event hook: the board's recent-events list
// (newest first), then next.
func (in *integration) onEvent(next func(r events.Record)) func(r events.Record) {
	var recent []live.Event
	in.board.SetEvents(nil, "no voltage event since the gateway started")
	return func(r events.Record) {
		e := live.Event{Kind: r.Kind.String(), Start: r.Start, DurationS: r.DurationS, ExtremePct: r.ExtremePct, Channels: r.Channels}
		recent = append([]live.Event{e}, recent[:min(len(recent), boardEvents-1)]...)
		in.board.SetEvents(recent, "")
		if next != nil {
			next(r)
		}
	}
}
