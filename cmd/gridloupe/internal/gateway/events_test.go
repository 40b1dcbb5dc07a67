package gateway

import (
	"context"
	"encoding/json"
	"io"
	"math"
	"path/filepath"
	"strings"
	"testing"
	"time"

	"github.com/gridloupe/gridloupe/metrics/alarm"
	"github.com/gridloupe/gridloupe/metrics/events"
	"github.com/gridloupe/gridloupe/store"
	"github.com/gridloupe/gridloupe/stream"
)

// dipSource is va, ia at 50 Hz, 6.4 kHz, with va at 60 % from 1.0 to 1.1 s
// for limit samples.
func dipSource(limit int) *levelSource {
	return &levelSource{limit: limit, a: func(t float64) float64 {
		if t >= 1.0 && t < 1.1 {
			return 138
		}
		return 230
	}}
}

// TestGatewayStoresEvents: under the gateway, a dip is stored with its
// waveform and its summary is queued on …/event at QoS 1.
func TestGatewayStoresEvents(t *testing.T) {
	t.Parallel()
	r := newRig(t, filepath.Join(t.TempDir(), "gl.db"), 1)
	ec := events.DefaultConfig()
	var seen []events.Record
	g, err := New(Config{
		Pipeline: stream.Config{Setup: r.setup, SampleRate: 6400, NominalHz: 50, Base: t0, Events: &ec},
		Source:   dipSource(3 * 6400), Store: r.db, Base: "gridloupe/test-site/gw1", Site: "test-site", Gateway: "gw1",
		CommitEvery: 20 * time.Millisecond, OnEvent: func(e events.Record) { seen = append(seen, e) }})
	if err != nil {
		t.Fatal(err)
	}
	if err := g.Run(context.Background()); err != nil {
		t.Fatal(err)
	}
	var got []events.Record
	if err := r.db.Events(time.Time{}, time.Time{}, func(e events.Record) error { got = append(got, e); return nil }); err != nil {
		t.Fatal(err)
	}
	if len(got) != 1 || got[0].Kind != events.Dip || got[0].Seq == 0 || len(seen) != 1 {
		t.Fatalf("stored %+v, seen %d, want one dip with a seq", got, len(seen))
	}
	// closed form: 100 ms at 60 % of 230 V; IEC 61000-4-30 class A, from memory: ±1 cycle, ±0.2 % of Udin
	if math.Abs(got[0].DurationS-0.1) > 0.02 || math.Abs(got[0].ExtremeV-138) > 0.46 {
		t.Fatalf("dip %+v, want 0.1 s at 138 V", got[0])
	}
	_, wave, err := r.db.Event(got[0].ID)
	if err != nil {
		t.Fatal(err)
	}
	w, err := store.DecodeWaveform(wave)
	if err != nil || len(w.Samples) != 2 || len(w.Samples[0]) != got[0].WaveformSamples || w.DipPct != 90 {
		t.Fatalf("waveform %v: %+v", err, w)
	}
	msgs, err := r.db.Pending(0, 100)
	if err != nil {
		t.Fatal(err)
	}
	n := 0
	for _, m := range msgs {
		if m.Topic == "gridloupe/test-site/gw1/event" {
			n++
			// DESIGN "Voltage events": site and gateway first, then the
			// event record's keys, no samples
			if m.QoS != 1 || m.Seq != got[0].Seq || !strings.HasPrefix(string(m.Payload), `{"site":"test-site","gateway":"gw1",`) ||
				!strings.Contains(string(m.Payload), `"event":"dip"`) || strings.Contains(string(m.Payload), "samples\":[") {
				t.Fatalf("event message %+v %s", m, m.Payload)
			}
		}
	}
	if n != 1 {
		t.Fatalf("%d event messages, want 1", n)
	}
}

// levelSource is va, ia at 50 Hz, 6.4 kHz, with va's RMS given by a(t).
type levelSource struct {
	n, limit int
	a        func(t float64) float64
}

func (s *levelSource) ReadFrames(dst []float64) (int, error) {
	k := 0
	for ; k < len(dst)/2 && s.n < s.limit; k++ {
		t := float64(s.n) / 6400
		dst[2*k] = math.Sqrt2 * s.a(t) * math.Cos(2*math.Pi*50*t)
		dst[2*k+1] = math.Sqrt2 * 100 * math.Cos(2*math.Pi*50*t-0.3)
		s.n++
	}
	if k == 0 {
		return 0, io.EOF
	}
	return k, nil
}

// TestGatewayEventAlarms: a 4.5 s dip to 60 % that ends in 0.5 s of
// interruption (invented). The dip rule is raised while the event lasts
// (its capture of max_capture_s 4 s from 10 cycles before the start is
// complete 3.8 s after it, closed form), the interruption rule when it
// ends; both transitions are committed with their …/alarm message; the
// event, reported as the interruption, keeps the waveform captured while
// it was a dip.
func TestGatewayEventAlarms(t *testing.T) {
	t.Parallel()
	r := newRig(t, filepath.Join(t.TempDir(), "gl.db"), 1)
	ec := events.DefaultConfig()
	rules := []alarm.Rule{
		{Name: "dip", Metric: alarm.MetricEvent, Kinds: []events.Kind{events.Dip}, Target: alarm.Target{Channel: -1}, OffDelay: time.Hour},
		{Name: "outage", Metric: alarm.MetricEvent, Kinds: []events.Kind{events.Interruption}, Target: alarm.Target{Channel: 0}, OffDelay: time.Hour},
	}
	ev, err := alarm.New(rules, r.setup, nil)
	if err != nil {
		t.Fatal(err)
	}
	src := &levelSource{limit: 9 * 6400, a: func(t float64) float64 {
		switch {
		case t >= 1 && t < 5.5:
			return 138
		case t >= 5.5 && t < 6:
			return 0
		}
		return 230
	}}
	g, err := New(Config{
		Pipeline: stream.Config{Setup: r.setup, SampleRate: 6400, NominalHz: 50, Base: t0, Events: &ec},
		Source:   src, Store: r.db, Alarms: ev, Base: "gridloupe/test-site/gw1", Site: "test-site", Gateway: "gw1",
		CommitEvery: 20 * time.Millisecond})
	if err != nil {
		t.Fatal(err)
	}
	if err := g.Run(context.Background()); err != nil {
		t.Fatal(err)
	}
	var got []events.Record
	if err := r.db.Events(time.Time{}, time.Time{}, func(e events.Record) error { got = append(got, e); return nil }); err != nil {
		t.Fatal(err)
	}
	if len(got) != 1 || got[0].Kind != events.Interruption {
		t.Fatalf("stored %+v, want one interruption (metrics/events: an interruption inside a dip is reported as the interruption)", got)
	}
	_, wave, err := r.db.Event(got[0].ID)
	if err != nil {
		t.Fatal(err)
	}
	if w, err := store.DecodeWaveform(wave); err != nil || len(w.Samples) != 2 || len(w.Samples[0]) != got[0].WaveformSamples || !got[0].WaveformCut {
		t.Fatalf("waveform of the interruption: %v %+v, want the cut capture of the dip's start", err, got[0])
	}
	msgs, err := r.db.Pending(0, 100)
	if err != nil {
		t.Fatal(err)
	}
	var alarms []string
	for _, m := range msgs {
		if m.Topic == "gridloupe/test-site/gw1/alarm" {
			alarms = append(alarms, string(m.Payload))
		}
	}
	start := got[0].Start
	want := []struct {
		rule, frag string
		at         time.Time
	}{
		{"dip", `"ongoing":true`, start.Add(3800 * time.Millisecond)},                                          // closed form: 4 s − 10 × 20 ms
		{"outage", `"kind":"interruption"`, start.Add(time.Duration(got[0].DurationS * float64(time.Second)))}, // at its end
	}
	if len(alarms) != len(want) {
		t.Fatalf("alarm messages %q, want %d (src: Evaluator.Event doc)", alarms, len(want))
	}
	for i, w := range want {
		var p struct {
			Alarm, State string
			Time         time.Time
		}
		if err := json.Unmarshal([]byte(alarms[i]), &p); err != nil {
			t.Fatal(err)
		}
		if p.Alarm != w.rule || p.State != "raised" || !strings.Contains(alarms[i], w.frag) || p.Time.Sub(w.at).Abs() > 2*time.Microsecond {
			t.Errorf("alarm message %d: %s\nwant %s raised at %v with %s (src: Evaluator.Event doc; times to the µs of the payload)", i, alarms[i], w.rule, w.at, w.frag)
		}
	}
	st, err := r.db.AlarmStates()
	if err != nil || !st["dip"].Raised || !st["outage"].Raised || !st["outage"].Pending {
		t.Errorf("stored alarm states %+v (%v), want both raised, outage's clear timer running", st, err)
	}
}
