package gateway

import (
	"context"
	"encoding/json"
	"errors"
	"path/filepath"
	"testing"
	"time"

	"github.com/gridloupe/gridloupe/metrics/alarm"
)

// windowSlack: a 10 min record ends within one 10-cycle window (200 ms at
// 50 Hz) of its wall-clock tick (DESIGN "Time": the window in progress at a
// tick belongs to the interval it started in).
const windowSlack = 250 * time.Millisecond

// TestOneClockForTime: the health and alarm messages carry their `time`
// on the sample clock (README "MQTT topics and payloads"), never the wall
// clock, so an accelerated or replayed source gives consistent times. The
// wall clock here is set years away from the samples.
func TestOneClockForTime(t *testing.T) {
	r := newRig(t, filepath.Join(t.TempDir(), "g.db"), 610)
	ev, err := alarm.New([]alarm.Rule{thdRule()}, r.setup, nil)
	if err != nil {
		t.Fatal(err)
	}
	wall := time.Date(2031, 7, 1, 0, 0, 0, 0, time.UTC)
	g := r.gateway(t, ev, func() time.Time { return wall }, nil)
	if err := g.Run(context.Background()); !errors.Is(err, ErrSourceEnded) {
		t.Fatalf("Run: %v", err)
	}
	msgs, err := r.db.Pending(0, 1000)
	if err != nil {
		t.Fatal(err)
	}
	var health, alarms, atTick int
	for _, m := range msgs {
		var p struct{ Time time.Time }
		if err := json.Unmarshal(m.Payload, &p); err != nil {
			t.Fatalf("%s: %v", m.Topic, err)
		}
		switch m.Topic {
		case "gridloupe/test-site/gw1/health":
			health++
			// src: the sample clock: t0 + 10 min is the first 10 min record's
			// end; the second (partial) ends with the samples
			if d := p.Time.Sub(t0.Add(10 * time.Minute)); d >= -windowSlack && d <= windowSlack {
				atTick++
			} else if p.Time.Before(t0) || p.Time.After(t0.Add(611*time.Second)) {
				t.Errorf("health time %v outside the samples' span from %v", p.Time, t0)
			}
		case "gridloupe/test-site/gw1/alarm":
			alarms++
			if p.Time.Before(t0) || p.Time.After(t0.Add(611*time.Second)) {
				t.Errorf("alarm time %v outside the samples' span from %v", p.Time, t0)
			}
		}
	}
	if atTick != 1 {
		t.Errorf("%d health messages at the first 10 min record's end %v, want 1", atTick, t0.Add(10*time.Minute))
	}
	if health < 1 || alarms < 1 {
		t.Errorf("%d health and %d alarm messages, want at least one of each", health, alarms)
	}
}
