package gateway

import (
	"context"
	"path/filepath"
	"strings"
	"testing"
	"time"

	"github.com/gridloupe/gridloupe/metrics"
	"github.com/gridloupe/gridloupe/stream"
)

// TestTelemetryQoS: telemetry is queued at QoS 1 unless a level is set
// otherwise (README, MQTT topics and payloads: telemetry_qos).
func TestTelemetryQoS(t *testing.T) {
	cases := []struct {
		name string
		qos  map[metrics.Interval]byte
		want byte
		src  string
	}{
		{"default", nil, 1, "README, MQTT topics and payloads: telemetry QoS 1 by default"},
		{"3s at QoS 0", map[metrics.Interval]byte{metrics.Int3s: 0}, 0, "config telemetry_qos: {3s: 0}"},
		{"other level set", map[metrics.Interval]byte{metrics.Int10min: 0}, 1, "an absent level keeps the default"},
	}
	for _, tc := range cases {
		t.Run(tc.name, func(t *testing.T) {
			r := newRig(t, filepath.Join(t.TempDir(), "g.db"), 15)
			g, err := New(Config{
				Pipeline: stream.Config{Setup: r.setup, SampleRate: 6400, NominalHz: 50, Base: t0},
				Source:   r.src, Store: r.db, Telemetry: []metrics.Interval{metrics.Int3s}, TelemetryQoS: tc.qos,
				Base: "gridloupe/test-site/gw1", Site: "test-site", Gateway: "gw1", CommitEvery: 20 * time.Millisecond})
			if err != nil {
				t.Fatal(err)
			}
			_ = g.Run(context.Background())
			msgs, err := r.db.Pending(0, 100)
			if err != nil {
				t.Fatal(err)
			}
			n := 0
			for _, m := range msgs {
				if strings.HasSuffix(m.Topic, "/telemetry/3s") {
					n++
					if m.QoS != tc.want {
						t.Errorf("3 s telemetry queued at QoS %d, want %d (%s)", m.QoS, tc.want, tc.src)
					}
				}
			}
			if n < 4 {
				t.Errorf("%d telemetry messages for 15 s, want 5 (3 s each)", n)
			}
		})
	}
}
