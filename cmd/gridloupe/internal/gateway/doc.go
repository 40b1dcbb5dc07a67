// Package gateway is the always-on daemon's core: it runs the measurement
// pipeline on a source and fans its records out to the sinks. One goroutine
// owns the per-sample path; a second owns all store writes (batched
// aggregates, alarm transitions committed at once with their outbox entry,
// telemetry queued in the outbox, retention). They meet at one bounded
// channel: replay and the simulator block on it (back-pressure, nothing
// lost); a live source never blocks and counts what it drops. 2 h values
// come from stream.Intervals like the 3 s and 10 min ones; after a restart
// the gateway seeds the open 2 h interval with its stored 10 min records
// (twohour.go).
//
// gateway builds the JSON payloads it queues; it never talks to a broker
// (the MQTT publisher drains the outbox) and holds no electrical rules
// (metrics and metrics/alarm do).
package gateway
