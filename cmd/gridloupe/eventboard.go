package main

import (
	"strings"
	"time"

	"github.com/gridloupe/gridloupe/metrics/events"
	"github.com/gridloupe/gridloupe/store"
	"github.com/gridloupe/gridloupe/stream/live"
	"github.com/gridloupe/gridloupe/stream/report"
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

// reportMaxEvents bounds the report's event list (the newest are kept).
const reportMaxEvents = 50

// reportEvents lists the stored voltage events of the evaluated week,
// oldest first, and says why when there are none.
func reportEvents(db *store.DB, from, to time.Time) ([]report.Event, string) {
	var out []report.Event
	err := db.Events(from, to, func(r events.Record) error {
		out = append(out, report.Event{Kind: r.Kind.String(), Start: r.Start, DurationS: r.DurationS,
			ExtremePct: r.ExtremePct, Channels: strings.Join(r.Channels, ", ")})
		if len(out) > reportMaxEvents {
			out = out[1:]
		}
		return nil
	})
	switch {
	case err != nil:
		return nil, "the store's events could not be read: " + err.Error()
	case len(out) == 0:
		return nil, "no voltage dip, swell or interruption is stored in this week"
	}
	return out, ""
}
