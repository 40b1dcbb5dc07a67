// Package stream owns the per-sample path: it reads frames from a source,
// calibrates them, tracks the line frequency on the reference channel, cuts
// gapless synchronized windows of 10 cycles (50 Hz systems) or 12 cycles
// (60 Hz systems), accumulates per-window sums and harmonic phasors, and hands
// each window to metrics.Compute. Intervals turns window records into 3 s, 10
// min and 2 h aggregates on the clock rules of IEC 61000-4-30, one
// aggregation level type for all three.
//
// Sources, sinks and encoders live in sub-packages (stream/input,
// stream/sim, stream/encode, ...). This package holds no electrical
// business rules: those belong in metrics. This package imports goertzel
// and metrics, never config, store or an MQTT client, and none of its
// sub-packages imports store either (outside tests): stream/mqtt speaks its
// own mqtt.Message, and the daemon core that owns the store goroutine is
// cmd/gridloupe/internal/gateway (DEVELOPERS.md, "Where the daemon core
// lives").
package stream
