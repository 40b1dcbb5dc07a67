package gateway

import (
	"strconv"
	"time"

	"github.com/gridloupe/gridloupe/metrics"
	"github.com/gridloupe/gridloupe/metrics/alarm"
	"github.com/gridloupe/gridloupe/stream/encode"
)

// appendHead opens a payload object with the site and gateway names; the
// publisher puts "seq" first when it sends it.
func appendHead(dst []byte, site, gw string) []byte {
	dst = append(dst, `{"site":`...)
	dst = encode.AppendString(dst, site)
	dst = append(dst, `,"gateway":`...)
	dst = encode.AppendString(dst, gw)
	return dst
}

// telemetryPayload is a record in the replay schema, with site and gateway.
func telemetryPayload(dst []byte, site, gw string, s *metrics.Setup, r *metrics.Record) []byte {
	dst = appendHead(dst, site, gw)
	body := encode.AppendJSON(nil, s, r)
	if len(body) > 1 {
		dst = append(dst, ',')
		dst = append(dst, body[1:]...)
	} else {
		dst = append(dst, '}')
	}
	return dst
}

// alarmPayload describes one transition.
func alarmPayload(site, gw string, t alarm.Transition, channel string) []byte {
	b := appendHead(nil, site, gw)
	b = append(b, `,"time":"`...)
	b = encode.AppendTime(b, t.Time)
	b = append(b, `","alarm":`...)
	b = encode.AppendString(b, t.Rule)
	state := "cleared"
	if t.Raised {
		state = "raised"
	}
	b = append(b, `,"state":"`...)
	b = append(b, state...)
	b = append(b, `","metric":`...)
	b = encode.AppendString(b, t.Metric)
	if channel != "" {
		b = append(b, `,"channel":`...)
		b = encode.AppendString(b, channel)
	}
	if t.Metric != alarm.MetricEvent { // event rules watch no interval
		b = append(b, `,"level":"`...)
		b = append(b, t.Level.String()...)
		b = append(b, '"')
	}
	b = append(b, `,"value":`...)
	b = encode.AppendNumber(b, t.Value)
	b = append(b, `,"threshold":`...)
	b = encode.AppendNumber(b, t.Threshold)
	b = append(b, `,"severity":`...)
	b = encode.AppendString(b, t.Severity)
	b = append(b, `,"text":`...)
	b = encode.AppendString(b, t.Text)
	if t.Event != nil {
		b = appendAlarmEvent(b, t.Event)
	}
	return append(b, '}')
}

// appendAlarmEvent is an event rule's "event" object: the event that
// raised the alarm (or the last that held it, on a clear).
func appendAlarmEvent(b []byte, e *alarm.Event) []byte {
	b = append(b, `,"event":{"id":`...)
	b = encode.AppendString(b, e.ID)
	b = append(b, `,"kind":"`...)
	b = append(b, e.Kind.String()...)
	b = append(b, `","start":"`...)
	b = encode.AppendTime(b, e.Start)
	b = append(b, `","duration_s":`...)
	b = encode.AppendNumber(b, e.DurationS)
	b = append(b, `,"channels":[`...)
	for i, c := range e.Channels {
		if i > 0 {
			b = append(b, ',')
		}
		b = encode.AppendString(b, c)
	}
	b = append(b, `],"extreme_v":`...)
	b = encode.AppendNumber(b, e.ExtremeV)
	b = append(b, `,"extreme_pct":`...)
	b = encode.AppendNumber(b, e.ExtremePct)
	if e.Open {
		b = append(b, `,"ongoing":true`...)
	}
	if e.Unfinished {
		b = append(b, `,"unfinished":true`...)
	}
	return append(b, '}')
}

// healthPayload reports the gateway's own state: store size and errors,
// messages dropped from the outbox per class, records dropped by a live
// source's queue.
func healthPayload(site, gw string, now time.Time, h Health) []byte {
	b := appendHead(nil, site, gw)
	b = append(b, `,"time":"`...)
	b = encode.AppendTime(b, now)
	b = append(b, `","store_bytes":`...)
	b = strconv.AppendInt(b, h.StoreBytes, 10)
	b = append(b, `,"records_stored":`...)
	b = strconv.AppendUint(b, h.Stored, 10)
	b = append(b, `,"records_dropped":`...)
	b = strconv.AppendUint(b, h.Dropped, 10)
	b = append(b, `,"outbox_dropped":`...)
	b = appendCounts(b, h.Losses)
	b = append(b, `,"records_lost":`...)
	b = appendCounts(b, h.LostRecords)
	b = append(b, `,"store_error":`...)
	b = appendOptString(b, h.StoreErr)
	b = append(b, `,"store_notice":`...)
	b = appendOptString(b, h.Notice)
	return append(b, '}')
}

// appendOptString appends s as a JSON string, or null when it is empty.
func appendOptString(b []byte, s string) []byte {
	if s == "" {
		return append(b, "null"...)
	}
	return encode.AppendString(b, s)
}

// appendCounts appends counts as a JSON object of name: count.
func appendCounts(b []byte, counts []ClassCount) []byte {
	b = append(b, '{')
	for i, c := range counts {
		if i > 0 {
			b = append(b, ',')
		}
		b = encode.AppendString(b, c.Class)
		b = append(b, ':')
		b = strconv.AppendUint(b, c.N, 10)
	}
	return append(b, '}')
}
