package config

import (
	"strings"
	"testing"
	"time"
)

// TestBaselineRuleKeys: relative_to: baseline with its learn period parses
// (learn defaults to a week); the keys are refused where they make no
// sense, each error naming the line and the key (README "Alarm rules").
func TestBaselineRuleKeys(t *testing.T) {
	t.Parallel()
	c, err := Parse("b.yaml", []byte(hdr3+"alarms:\n  - {name: ageing, metric: tdd_h50_pct, channel: ia, relative_to: baseline, above: 5}\n"))
	if err != nil {
		t.Fatal(err)
	}
	if a := c.Alarms[0]; a.RelativeTo != RelativeBaseline || a.Learn != 168*time.Hour {
		t.Errorf("rule %+v; want relative_to baseline, learn 168h (the documented default)", a)
	}
	for _, tc := range []struct{ rule, want string }{
		{"{name: x, metric: tdd_h50_pct, channel: ia, relative_to: nominal, above: 5}", "b.yaml:11"},
		{"{name: x, metric: tdd_h50_pct, channel: ia, learn: 24h, above: 5}", "learn"},
		{"{name: x, metric: tdd_h50_pct, channel: ia, relative_to: baseline, learn: -1h, above: 5}", "learn"},
		{"{name: x, metric: tdd_h50_pct, channel: ia, relative_to: baseline, above: -5}", "rise/drop"},
	} {
		_, err := Parse("b.yaml", []byte(hdr3+"alarms:\n  - "+tc.rule+"\n"))
		if err == nil || !strings.Contains(err.Error(), tc.want) {
			t.Errorf("%s: error %v, want one naming %q", tc.rule, err, tc.want)
		}
	}
	// without any current base the load bins have nothing to be a percentage of
	_, err = Parse("b.yaml", []byte(strings.Replace(hdr3, "il_a: 160\n", "", 1)+
		"alarms:\n  - {name: x, metric: thd_h50_pct, channel: va, relative_to: baseline, above: 1}\n"))
	if err == nil || !strings.Contains(err.Error(), "il_a") {
		t.Errorf("baseline without il_a: %v", err)
	}
}
