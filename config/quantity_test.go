package config

import (
	"strings"
	"testing"
)

// TestAlarmOnTableQuantity: a per-channel quantity of metrics/quantity's
// table that alarms may watch (crest_factor) is accepted on a channel and
// rejected with a phase (README "Alarm rules"); config --defaults lists it.
func TestAlarmOnTableQuantity(t *testing.T) {
	ok := hdr1 + "alarms:\n  - {name: cf, metric: crest_factor, channel: va, above: 2.5}\n"
	c, err := Parse("cf.yaml", []byte(ok))
	if err != nil {
		t.Fatalf("crest_factor rule rejected: %v", err)
	}
	if len(c.Alarms) != 1 || c.Alarms[0].Metric != "crest_factor" || c.Alarms[0].Level != "10min" {
		t.Errorf("rule %+v, want crest_factor at the default level 10min", c.Alarms)
	}
	bad := hdr1 + "alarms:\n  - {name: cf, metric: crest_factor, phase: a, above: 2.5}\n"
	if _, err := Parse("cf.yaml", []byte(bad)); err == nil || !strings.Contains(err.Error(), "is per channel") {
		t.Errorf("crest_factor with a phase: %v, want the per-channel error", err)
	}
	if d := Defaults(); !strings.Contains(d, "| crest_factor |") || !strings.Contains(d, "crest_factor ratio") {
		t.Errorf("config --defaults does not list crest_factor with its unit")
	}
}
