package main

import (
	"encoding/json"
	"math"
	"strings"
	"testing"
	"time"

	"github.com/gridloupe/gridloupe/stream/mqtt/mqtttest"
)

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

// TestSummaryCircuits: with `circuits:` (the shipped North Weir bus), the
// retained summary a BMS reads from a real mosquitto carries the bus
// voltages and, per circuit, P, Q1, Se, PF, DPF, lead/lag and the current
// TDD per phase (README "MQTT topics and payloads"), each the circuit's
// own figure of the full telemetry record with the same end, rounded to
// the summary's resolution; every message is under 1 KB.
func TestSummaryCircuits(t *testing.T) {
	if mqtttest.Binary() == "" {
		t.Skip("mosquitto not installed")
	}
	mosq := mqtttest.Start(t)
	cfg := busDaemon(t, mosq.URL())
	sub := mqtttest.Subscribe(t, mosq.URL(), busBase+"/+/3s")
	if r := runCmd("run", "--config", cfg, "--stop-after", "9s", "--log-level", "error"); r.code != 0 {
		t.Fatalf("run: exit %d: %s", r.code, r.stderr)
	}
	msgs := sub.WaitFor(t, "3 summaries and 3 telemetry records", 10*time.Second, func(m []mqtttest.Message) bool { return len(m) >= 6 })
	type circ struct {
		P    float64            `json:"p_w"`
		Q1   float64            `json:"q_var"`
		Se   float64            `json:"se_va"`
		PF   float64            `json:"pf"`
		DPF  float64            `json:"dpf"`
		TDD  map[string]float64 `json:"i_tdd_h50_pct"`
		Lead string             `json:"lead_lag"`
	}
	type tele struct {
		Start    time.Time `json:"start"`
		Duration float64   `json:"duration_s"`
		Channels map[string]struct {
			TDD float64 `json:"tdd_h50_pct"`
		} `json:"channels"`
		Circuits map[string]struct {
			Total struct {
				P   float64 `json:"p_w"`
				Q1  float64 `json:"q_var"`
				Se  float64 `json:"se_va"`
				PF  float64 `json:"pf"`
				DPF float64 `json:"dpf"`
			} `json:"total"`
		} `json:"circuits"`
	}
	records := map[time.Time]tele{} // by end time, to the µs the summary gives
	type summ struct {
		End      time.Time                     `json:"end"`
		Phases   map[string]map[string]float64 `json:"phases"`
		Circuits map[string]circ               `json:"circuits"`
	}
	var sums []summ
	for _, m := range msgs {
		switch {
		case strings.HasSuffix(m.Topic, "/telemetry/3s"):
			var r tele
			if err := json.Unmarshal(m.Payload, &r); err != nil {
				t.Fatal(err)
			}
			end := r.Start.Add(time.Duration(r.Duration * float64(time.Second)))
			records[end.Round(time.Microsecond)] = r
		case strings.HasSuffix(m.Topic, "/summary/3s"):
			if len(m.Payload) >= summaryLimit || !m.Retained && m.QoS != 1 {
				t.Errorf("summary %d bytes, retained %v, QoS %d; want under %d", len(m.Payload), m.Retained, m.QoS, summaryLimit)
			}
			var s summ
			if err := json.Unmarshal(m.Payload, &s); err != nil {
				t.Fatalf("%v: %s", err, m.Payload)
			}
			sums = append(sums, s)
			t.Logf("summary: %d bytes: %s", len(m.Payload), m.Payload)
		}
	}
	// tolerances: half the summary's resolution (stream/summary: 1 W,
	// 0.0001, 0.01 %) plus float printing; common practice, no source
	const tolW, tolPF, tolPct = 0.5 + 1e-6, 0.00005 + 1e-9, 0.005 + 1e-9
	near := func(a, b, tol float64) bool { return math.Abs(a-b) <= tol }
	checked := 0
	for _, s := range sums {
		if a := s.Phases["a"]; len(a) != 2 || !(a["v_v"] > 200) || !(a["v_thd_h50_pct"] > 0) {
			t.Errorf("bus phase a %v; want v_v and v_thd_h50_pct only", a)
		}
		r, ok := records[s.End]
		if !ok {
			continue
		}
		checked++
		for _, name := range []string{"incomer", "pump1", "pump2"} {
			c, tot := s.Circuits[name], r.Circuits[name].Total
			if !near(c.P, tot.P, tolW) || !near(c.Q1, tot.Q1, tolW) || !near(c.Se, tot.Se, tolW) || !near(c.PF, tot.PF, tolPF) || !near(c.DPF, tot.DPF, tolPF) || c.Lead != "lag" {
				t.Errorf("%s: summary %+v, telemetry total %+v", name, c, tot)
			}
			if !(c.P > 1000) {
				t.Errorf("%s: P %v W; want the circuit's share of the simulated load", name, c.P)
			}
		}
		// the current TDD per phase, each against its circuit's il_a
		for name, chans := range map[string][3]string{"incomer": {"ia", "ib", "ic"}, "pump1": {"p1a", "p1b", "p1c"}, "pump2": {"p2a", "p2b", "p2c"}} {
			for k, ph := range []string{"a", "b", "c"} {
				if got, want := s.Circuits[name].TDD[ph], r.Channels[chans[k]].TDD; !near(got, want, tolPct) {
					t.Errorf("%s phase %s: TDD %v, telemetry %s %v", name, ph, got, chans[k], want)
				}
			}
		}
	}
	if checked == 0 {
		t.Fatalf("no summary matched a telemetry record by end time (%d summaries, %d records)", len(sums), len(records))
	}
}

// TestSummaryCircuitsBudget: a bus whose summary could pass 1 KB (here the
// incomer renamed to 90 characters) is refused by `config --check` and
// `run` with a message naming mqtt.summary_circuits and how many circuits
// fit; listing fewer there passes, and the retained summary then carries
// only those (README "MQTT topics and payloads").
func TestSummaryCircuitsBudget(t *testing.T) {
	if mqtttest.Binary() == "" {
		t.Skip("mosquitto not installed")
	}
	mosq := mqtttest.Start(t)
	long := "incomer-from-the-main-switchboard-through-the-pump-hall-busbar-trunking-section-two-north"
	cfg := busDaemon(t, mosq.URL(), "name: incomer,", "name: "+long+",")
	for _, args := range [][]string{{"config", "--check", cfg}, {"run", "--config", cfg, "--stop-after", "3s", "--log-level", "error"}} {
		r := runCmd(args...)
		if r.code != 2 || !strings.Contains(r.stderr, "mqtt.summary_circuits: the summary with circuits "+long+", pump1, pump2 can reach") ||
			!strings.Contains(r.stderr, "at most 2 of these") {
			t.Errorf("%s: exit %d, stderr %q; want 2 and the key, the circuits and how many fit", args[0], r.code, r.stderr)
		}
	}
	editConfig(t, cfg, "summary: [3s]}", "summary: [3s], summary_circuits: [pump2, "+long+"]}")
	if r := runCmd("config", "--check", cfg); r.code != 0 {
		t.Fatalf("config --check with two circuits listed: exit %d: %s", r.code, r.stderr)
	}
	sub := mqtttest.Subscribe(t, mosq.URL(), busBase+"/summary/3s")
	if r := runCmd("run", "--config", cfg, "--stop-after", "3s", "--log-level", "error"); r.code != 0 {
		t.Fatalf("run: exit %d: %s", r.code, r.stderr)
	}
	m := sub.WaitFor(t, "a summary", 10*time.Second, func(m []mqtttest.Message) bool { return len(m) >= 1 })[0]
	if b := string(m.Payload); !strings.Contains(b, `"circuits":{"pump2":{`) || !strings.Contains(b, `},"`+long+`":{`) || strings.Contains(b, "pump1") || len(b) >= summaryLimit {
		t.Errorf("summary %d bytes %s; want pump2 then the incomer, no pump1, under %d", len(b), b, summaryLimit)
	}
}
