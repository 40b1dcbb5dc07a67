package events

import (
	"encoding/json"
	"fmt"
	"strings"
	"time"
)

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
	return k.String() + "-" + start.UTC().Format(idLayout)
}

// recordJSON is the one JSON shape of a Record (DESIGN "Voltage events"):
// unfinished, waveform_cut and seq appear only when set. The replay, list
// and MQTT outputs write the same keys by hand (stream/encode.AppendEvent,
// which fixes the number and time formats); this shape reads them back and
// is the stored form.
type recordJSON struct {
	Kind            string    `json:"event"`
	ID              string    `json:"id"`
	Start           time.Time `json:"start"`
	DurationS       float64   `json:"duration_s"`
	Channels        []string  `json:"channels"`
	Worst           string    `json:"worst_channel"`
	ExtremeV        float64   `json:"extreme_v"`
	ExtremePct      float64   `json:"extreme_pct"`
	WaveformSamples int       `json:"waveform_samples"`
	WaveformStart   time.Time `json:"waveform_start"`
	Unfinished      bool      `json:"unfinished,omitempty"`
	WaveformCut     bool      `json:"waveform_cut,omitempty"`
	Seq             uint64    `json:"seq,omitempty"`
}

// MarshalJSON encodes r with the keys of DESIGN "Voltage events", times in
// UTC.
func (r Record) MarshalJSON() ([]byte, error) {
	return json.Marshal(recordJSON{Kind: r.Kind.String(), ID: r.ID, Start: r.Start.UTC(), DurationS: r.DurationS,
		Channels: r.Channels, Worst: r.Worst, ExtremeV: r.ExtremeV, ExtremePct: r.ExtremePct,
		WaveformSamples: r.WaveformSamples, WaveformStart: r.WaveformStart.UTC(), Unfinished: r.Unfinished,
		WaveformCut: r.WaveformCut, Seq: r.Seq})
}

// UnmarshalJSON decodes an event record (MarshalJSON's or
// stream/encode.AppendEvent's form); an unknown kind is an error naming it.
func (r *Record) UnmarshalJSON(b []byte) error {
	var e recordJSON
	if err := json.Unmarshal(b, &e); err != nil {
		return fmt.Errorf("event record: %w", err)
	}
	k, ok := ParseKind(e.Kind)
	if !ok {
		return fmt.Errorf("event record: key event: %q is none of dip, swell, interruption", e.Kind)
	}
	*r = Record{Kind: k, ID: e.ID, Start: e.Start.UTC(), DurationS: e.DurationS, Channels: e.Channels,
		Worst: e.Worst, ExtremeV: e.ExtremeV, ExtremePct: e.ExtremePct, WaveformSamples: e.WaveformSamples,
		WaveformStart: e.WaveformStart.UTC(), Unfinished: e.Unfinished, WaveformCut: e.WaveformCut, Seq: e.Seq}
	return nil
}

// idLayout is the time part of an ID.
const idLayout = "20060102T150405.000000Z"

// ParseID returns the kind and start (to the microsecond) an ID names.
func ParseID(id string) (Kind, time.Time, bool) {
	name, ts, ok := strings.Cut(id, "-")
	if !ok {
		return 0, time.Time{}, false
	}
	k, ok := ParseKind(name)
	if !ok {
		return 0, time.Time{}, false
	}
	t, err := time.Parse(idLayout, ts)
	if err != nil {
		return 0, time.Time{}, false
	}
	return k, t, true
}
