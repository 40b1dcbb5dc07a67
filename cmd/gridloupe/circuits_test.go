package main

import (
	"encoding/json"
	"fmt"
	"os"
	"path/filepath"
	"testing"
	"time"

	"github.com/gridloupe/gridloupe/stream/mqtt/mqtttest"
)

// busBase is the topic base of busDaemon's gateway.
const busBase = "gridloupe/north-weir-dc2/gw-bus"

// busDaemon writes the shipped several-circuit example
// (testdata/north-weir-bus.yaml) as a gateway config: the simulator at
// full speed, a real bbolt store in a fresh folder, the given broker with
// 3 s telemetry and summaries; edits are editConfig's old/new pairs.
func busDaemon(t *testing.T, broker string, edits ...string) string {
	t.Helper()
	text, err := os.ReadFile(filepath.Join("..", "..", "testdata", "north-weir-bus.yaml"))
	if err != nil {
		t.Fatal(err)
	}
	dir := t.TempDir()
	cfg := writeFile(t, dir, "bus.yaml", string(text)+fmt.Sprintf(`gateway: gw-bus
source: {kind: sim, speed: 0}
store: {path: %s, commit_every: 1s}
mqtt: {broker: %q, telemetry: [3s], summary: [3s]}
`, filepath.Join(dir, "gl.db"), broker))
	if len(edits) > 0 {
		editConfig(t, cfg, edits...)
	}
	return cfg
}

// TestUnbalanceCircuitAlarm: under `run` on the shipped bus, an
// unbalance_current_pct rule that names circuit pump2 reads that circuit's
// current unbalance. The simulated drives draw balanced currents (about
// 0.02 %), so a rule raised below 5 % raises with a value near 0, not
// null (the bus itself has no currents and no current unbalance; README
// "Several circuits on one bus"), and the alarm message carries it.
func TestUnbalanceCircuitAlarm(t *testing.T) {
	if mqtttest.Binary() == "" {
		t.Skip("mosquitto not installed")
	}
	mosq := mqtttest.Start(t)
	cfg := busDaemon(t, mosq.URL(), "circuit: pump2, above: 10, deadband: 1}", "circuit: pump2, level: 3s, below: 5, deadband: 1}")
	sub := mqtttest.Subscribe(t, mosq.URL(), busBase+"/alarm")
	if r := runCmd("run", "--config", cfg, "--stop-after", "9s", "--log-level", "error"); r.code != 0 {
		t.Fatalf("run: exit %d: %s", r.code, r.stderr)
	}
	sub.WaitFor(t, "pump2-unbalance raised", 10*time.Second, func(m []mqtttest.Message) bool {
		for _, x := range m {
			var p struct {
				Alarm, State string
				Value        *float64
			}
			if json.Unmarshal(x.Payload, &p) == nil && p.Alarm == "pump2-unbalance" && p.State == "raised" {
				// src: the simulator's balanced drives, about 0.02 % (README
				// "MQTT topics and payloads" example); project bound 1 %
				if p.Value == nil || *p.Value < 0 || *p.Value > 1 {
					t.Errorf("raised with value %v; want pump2's current unbalance, 0..1 %%: %s", p.Value, x.Payload)
				}
				return true
			}
		}
		return false
	})
}
