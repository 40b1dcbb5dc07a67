package encode

import (
	"encoding/json"
	"reflect"
	"testing"
	"time"

	"github.com/gridloupe/gridloupe/metrics/events"
)

// TestEventLineReadsBack: the line AppendEvent writes (DESIGN "Voltage
// events": the keys, optional ones only when set) is read back by the one
// JSON shape of metrics/events into the same record, and that shape's own
// encoding (the store's form) omits the same optional keys.
func TestEventLineReadsBack(t *testing.T) {
	t.Parallel()
	start := time.Date(2026, 3, 1, 10, 0, 1, 20_000_000, time.UTC)
	base := events.Record{Kind: events.Dip, ID: events.ID(events.Dip, start), Start: start, DurationS: 0.12,
		Channels: []string{"va", "vb"}, Worst: "va", ExtremeV: 138.3, ExtremePct: 60.130434782608695,
		WaveformSamples: 7373, WaveformStart: start.Add(-200 * time.Millisecond)}
	set := base
	set.Kind, set.ID, set.Unfinished, set.WaveformCut, set.Seq = events.Interruption, events.ID(events.Interruption, start), true, true, 42
	for _, r := range []events.Record{base, set} {
		line := AppendEvent(nil, &r)
		var got events.Record
		if err := json.Unmarshal(line, &got); err != nil {
			t.Fatalf("%s: %v", line, err)
		}
		if !reflect.DeepEqual(got, r) {
			t.Fatalf("read back %+v\nwant %+v\nfrom %s", got, r, line)
		}
		var a, b map[string]any
		stored, err := json.Marshal(r)
		if err != nil {
			t.Fatal(err)
		}
		if err := json.Unmarshal(line, &a); err != nil {
			t.Fatal(err)
		}
		if err := json.Unmarshal(stored, &b); err != nil {
			t.Fatal(err)
		}
		for k := range a {
			if _, ok := b[k]; !ok {
				t.Errorf("key %s in the output line is missing from MarshalJSON's form", k)
			}
		}
		if len(a) != len(b) {
			t.Errorf("keys: line %d, MarshalJSON %d (%s vs %s)", len(a), len(b), line, stored)
		}
	}
	var bad events.Record
	if err := json.Unmarshal([]byte(`{"event":"sag"}`), &bad); err == nil {
		t.Fatal("kind sag accepted; DESIGN \"Voltage events\" allows dip, swell, interruption")
	}
}
