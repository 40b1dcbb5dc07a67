package main

import (
	"encoding/json"
	"testing"
	"time"

	"github.com/gridloupe/gridloupe/stream/mqtt/mqtttest"
)

// summaryLimit is the Field contract's size bound of a summary message
// (DESIGN "Building and plant integration": under 1 KB).
const summaryLimit = 1024

// TestSummaryRetained: after the gateway has stopped, a BMS that connects
// to a real mosquitto gets the newest 3 s and 10 min summaries at once
// (retained), at QoS 1, each under 1 KB and beside the full telemetry
// record (README "MQTT topics and payloads").
func TestSummaryRetained(t *testing.T) {
	if mqtttest.Binary() == "" {
		t.Skip("mosquitto not installed")
	}
	mosq := mqtttest.Start(t)
	dir := t.TempDir()
	cfg := daemonConfig(t, dir, mosq.URL())
	editConfig(t, cfg, "speed: 60", "speed: 0", "telemetry: [3s]}", "telemetry: [3s], summary: [3s, 10min]}")
	if r := runCmd("run", "--config", cfg, "--stop-after", "11m", "--log-level", "error"); r.code != 0 {
		t.Fatalf("run: exit %d: %s", r.code, r.stderr)
	}
	base := "gridloupe/test-bench/gw-test"
	sub := mqtttest.Subscribe(t, mosq.URL(), base+"/summary/#")
	msgs := sub.WaitFor(t, "retained 3s and 10min summaries", 10*time.Second, func(m []mqtttest.Message) bool {
		return len(m) >= 2
	})
	seen := map[string]bool{}
	for _, m := range msgs {
		seen[m.Topic] = true
		if !m.Retained || m.QoS != 1 || len(m.Payload) >= summaryLimit {
			t.Errorf("%s: retained %v, QoS %d, %d bytes; want retained, QoS 1, under %d", m.Topic, m.Retained, m.QoS, len(m.Payload), summaryLimit)
		}
		var p struct {
			Seq    uint64                    `json:"seq"`
			End    time.Time                 `json:"end"`
			Freq   float64                   `json:"freq_hz"`
			Phases map[string]map[string]any `json:"phases"`
		}
		if err := json.Unmarshal(m.Payload, &p); err != nil || p.Seq == 0 || p.End.IsZero() || p.Freq < 49 || p.Freq > 51 {
			t.Errorf("%s: payload %s (%v)", m.Topic, m.Payload, err)
		}
		if a := p.Phases["a"]; a["lead_lag"] != "lag" || a["i_tdd_h50_pct"] == nil || a["v_thd_h50_pct"] == nil {
			t.Errorf("%s: phase a %v; want lag (the simulated drives draw lagging Q1) and both distortion figures", m.Topic, a)
		}
		t.Logf("%s: %d bytes", m.Topic, len(m.Payload))
	}
	if !seen[base+"/summary/3s"] || !seen[base+"/summary/10min"] {
		t.Errorf("topics %v; want summary/3s and summary/10min", seen)
	}
}
