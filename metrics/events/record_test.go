package events

import (
	"encoding/json"
	"reflect"
	"strings"
	"testing"
	"time"
)

// srcRecordJSON: the keys and kind names of an event record.
const srcRecordJSON = `DESIGN "Voltage events": event is dip, swell or interruption; keys event, id, start, duration_s, channels, worst_channel, extreme_v, extreme_pct, waveform_samples, waveform_start`

// TestRecordJSON: a record survives MarshalJSON and UnmarshalJSON whole
// (times back in UTC); unfinished, waveform_cut and seq appear only when
// set; an unknown kind is an error naming it.
func TestRecordJSON(t *testing.T) {
	cet := time.FixedZone("CET", 3600)
	start := time.Date(2026, 3, 1, 11, 0, 1, 20_000_000, cet) // invented event, 10:00:01.02 UTC
	full := Record{Kind: Interruption, ID: ID(Interruption, start), Start: start, DurationS: 1.5, Channels: []string{"va", "vb", "vc"},
		Worst: "vb", ExtremeV: 4.5, ExtremePct: 1.96, WaveformSamples: 40960, WaveformStart: start.Add(-200 * time.Millisecond),
		Unfinished: true, WaveformCut: true, Seq: 17}
	bare := Record{Kind: Swell, ID: ID(Swell, start), Start: start.UTC(), DurationS: 0.2, Channels: []string{"vc"}, Worst: "vc",
		ExtremeV: 265, ExtremePct: 115.2, WaveformStart: start.UTC()}
	for _, tc := range []struct {
		name   string
		r      Record
		absent []string // keys that must not appear
	}{
		{"every key set", full, nil},
		{"optional keys unset", bare, []string{"unfinished", "waveform_cut", "seq"}},
	} {
		t.Run(tc.name, func(t *testing.T) {
			b, err := json.Marshal(tc.r)
			if err != nil {
				t.Fatal(err)
			}
			var keys map[string]any
			if err := json.Unmarshal(b, &keys); err != nil {
				t.Fatal(err)
			}
			for _, k := range []string{"event", "id", "start", "duration_s", "channels", "worst_channel", "extreme_v", "extreme_pct", "waveform_samples", "waveform_start"} {
				if _, ok := keys[k]; !ok {
					t.Errorf("key %s missing from %s (src: %s)", k, b, srcRecordJSON)
				}
			}
			for _, k := range tc.absent {
				if _, ok := keys[k]; ok {
					t.Errorf("key %s present in %s, want it only when set (src: recordJSON doc)", k, b)
				}
			}
			if keys["event"] != tc.r.Kind.String() || !strings.HasSuffix(keys["start"].(string), "Z") {
				t.Errorf("event %v, start %v: want the kind's name and a UTC time (src: %s)", keys["event"], keys["start"], srcRecordJSON)
			}
			var back Record
			if err := json.Unmarshal(b, &back); err != nil {
				t.Fatal(err)
			}
			want := tc.r
			want.Start, want.WaveformStart = want.Start.UTC(), want.WaveformStart.UTC()
			if !reflect.DeepEqual(back, want) {
				t.Errorf("round trip:\n got %+v\nwant %+v (src: UnmarshalJSON doc: MarshalJSON's form)", back, want)
			}
		})
	}
	var r Record
	err := json.Unmarshal([]byte(`{"event":"sag","id":"x"}`), &r)
	if err == nil || !strings.Contains(err.Error(), `"sag" is none of dip, swell, interruption`) {
		t.Errorf("unknown kind: %v, want an error naming it and the allowed kinds (src: %s)", err, srcRecordJSON)
	}
}

// TestParseID: ParseID reads back the kind and the start, to the
// microsecond, of every ID, and refuses anything else.
func TestParseID(t *testing.T) {
	start := time.Date(2026, 3, 1, 10, 0, 1, 20_345_678, time.UTC) // invented; the id keeps 10:00:01.020345
	for _, k := range []Kind{Dip, Swell, Interruption} {
		id := ID(k, start)
		gk, gt, ok := ParseID(id)
		if want := start.Truncate(time.Microsecond); !ok || gk != k || !gt.Equal(want) {
			t.Errorf("ParseID(%q) = %v, %v, %v; want %v, %v (src: ID doc, layout to the microsecond)", id, gk, gt, ok, k, want)
		}
	}
	for _, id := range []string{"", "dip", "dip-", "sag-20260301T100001.020345Z", "dip-20260301T100001Z", "dip-2026-03-01T10:00:01Z"} {
		if _, _, ok := ParseID(id); ok {
			t.Errorf("ParseID(%q) ok, want refused (src: ID doc: <kind>-<start, compact UTC>)", id)
		}
	}
}
