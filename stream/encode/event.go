package encode

import (
	"github.com/gridloupe/gridloupe/metrics/events"
)

// AppendEvent appends r as one JSON object (no newline), with the keys of
// DESIGN "Voltage events": event, id, start, duration_s, channels,
// worst_channel, extreme_v, extreme_pct, waveform_samples, then
// waveform_start, and unfinished, waveform_cut and seq only when set.
// Numbers are shortest round-trip.
func AppendEvent(dst []byte, r *events.Record) []byte {
	dst = append(dst, `{"event":`...)
	dst = appendJSONString(dst, r.Kind.String())
	dst = append(dst, `,"id":`...)
	dst = appendJSONString(dst, r.ID)
	dst = append(dst, `,"start":"`...)
	dst = AppendTime(dst, r.Start)
	dst = append(dst, `","duration_s":`...)
	dst = appendJSONNum(dst, r.DurationS)
	dst = append(dst, `,"channels":[`...)
	for i, c := range r.Channels {
		if i > 0 {
			dst = append(dst, ',')
		}
		dst = appendJSONString(dst, c)
	}
	dst = append(dst, `],"worst_channel":`...)
	dst = appendJSONString(dst, r.Worst)
	dst = append(dst, `,"extreme_v":`...)
	dst = appendJSONNum(dst, r.ExtremeV)
	dst = append(dst, `,"extreme_pct":`...)
	dst = appendJSONNum(dst, r.ExtremePct)
	dst = append(dst, `,"waveform_samples":`...)
	dst = appendNum(dst, float64(r.WaveformSamples))
	dst = append(dst, `,"waveform_start":"`...)
	dst = AppendTime(dst, r.WaveformStart)
	dst = append(dst, '"')
	if r.Unfinished {
		dst = append(dst, `,"unfinished":true`...)
	}
	if r.WaveformCut {
		dst = append(dst, `,"waveform_cut":true`...)
	}
	if r.Seq != 0 {
		dst = append(dst, `,"seq":`...)
		dst = appendNum(dst, float64(r.Seq))
	}
	return append(dst, '}')
}
