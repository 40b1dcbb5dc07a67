// Package web is the gateway's HTTP listener: Prometheus text exposition
// on /metrics, the latest values as JSON on /api/latest, and a live status
// page on / (figures per phase, a phasor diagram, each channel's harmonic
// spectrum against the IEEE 519 limits, active alarms, recent events),
// built from one embedded HTML file with no external assets.
//
// The exposition (text format 0.0.4) is written by hand in expo.go, so no
// Prometheus client library reaches the binary; the tests parse it with the
// Prometheus parser. The package reads a live.Board and holds no electrical
// rules beyond looking up the limit tables.
package web
