package events

import "time"

// Record is an event as it is reported, stored and published: wall time and
// channel names (DESIGN "Voltage events"; the keys are the JSON names).
type Record struct {
	Kind            Kind      // event
	ID              string    // id: "<kind>-<start, compact UTC>"
	Start           time.Time // start
	DurationS       float64   // duration_s
	Channels        []string  // channels: voltage channels that crossed the threshold, config order
	Worst           string    // worst_channel: the channel holding the extreme
	ExtremeV        float64   // extreme_v: residual (dips, interruptions) or maximum (swells)
	ExtremePct      float64   // extreme_pct: ExtremeV in % of the declared voltage
	WaveformSamples int       // waveform_samples: captured frames per channel
	WaveformStart   time.Time // waveform_start: wall time of the first captured frame
	Unfinished      bool      // unfinished: still open when the input ended or the daemon stopped
	WaveformCut     bool      // waveform_cut: the capture was cut at max_capture_s
	Seq             uint64    // seq: the outbox number when published; 0 = not published
}

// ID returns an event's id from its kind and start, e.g.
// "dip-20260301T100001.020000Z".
func ID(k Kind, start time.Time) string {
	return k.String() + "-" + start.UTC().Format("20060102T150405.000000Z")
}
