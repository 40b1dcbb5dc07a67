package main

import (
	"fmt"
	"strconv"
	"strings"
	"time"

	"github.com/gridloupe/gridloupe/cmd/internal/replaycmd"
	"github.com/gridloupe/gridloupe/config"
	"github.com/gridloupe/gridloupe/metrics"
	"github.com/gridloupe/gridloupe/metrics/alarm"
)

// suggestAlarms returns, for a config without alarm rules, the usual
// starting rules for its channels (alarm.DefaultRules: TDD per current
// channel, THD per voltage channel, total PF; and a supply-dip event
// rule when there are voltage channels) as YAML to paste under
// `alarms:`, or "" when the config has rules or none apply.
func suggestAlarms(cfg *config.Config) (string, error) {
	if len(cfg.Alarms) > 0 {
		return "", nil
	}
	s, _, err := replaycmd.SetupFromConfig(cfg)
	if err != nil {
		return "", err
	}
	var cur, volt []int
	for i, ch := range s.Channels {
		switch {
		case ch.Kind == metrics.Current && ch.Phase != 'n':
			cur = append(cur, i)
		case ch.Kind == metrics.Voltage:
			volt = append(volt, i)
		}
	}
	rules := alarm.DefaultRules(s, cfg.ILA, cfg.IscA, cfg.Nominal.VoltageV, cur, volt)
	if len(rules) == 0 {
		return "", nil
	}
	var b strings.Builder
	b.WriteString("no alarm rules; the usual starting rules for these channels (IEEE 519-2014 limits apply at the PCC) are:\nalarms:\n")
	for _, r := range rules {
		b.WriteString(ruleYAML(s, cfg.ILA, r))
	}
	if len(volt) > 0 {
		b.WriteString(supplyDipYAML)
	}
	return b.String(), nil
}

// supplyDipYAML is the starting rule on voltage events: a dip or an
// interruption, cleared 10 minutes after the last one (README "Alarm
// rules", event rules).
const supplyDipYAML = "  - {name: supply-dip, metric: event, kind: [dip, interruption], off_delay: 10m, severity: warning}\n"

// ruleYAML writes one rule in the config's flow style.
func ruleYAML(s *metrics.Setup, il float64, r alarm.Rule) string {
	f := func(v float64) string { return strconv.FormatFloat(v, 'g', -1, 64) }
	var b strings.Builder
	fmt.Fprintf(&b, "  - {name: %s, metric: %s, ", r.Name, r.Metric)
	switch {
	case r.Target.Channel >= 0:
		fmt.Fprintf(&b, "channel: %s, ", s.Channels[r.Target.Channel].Name)
	case r.Target.Total:
		b.WriteString("phase: total, ")
	case r.Target.Phase != 0:
		fmt.Fprintf(&b, "phase: %c, ", r.Target.Phase)
	}
	dir := "below"
	if r.Above {
		dir = "above"
	}
	fmt.Fprintf(&b, "level: %s, %s: %s, deadband: %s, on_delay: %s, off_delay: %s, severity: %s",
		r.Level, dir, f(r.Threshold), f(r.Deadband), shortDuration(r.OnDelay), shortDuration(r.OffDelay), r.Severity)
	if r.MinLoad > 0 && il > 0 {
		fmt.Fprintf(&b, ", min_load_pct: %s", f(100*r.MinLoad/il))
	}
	b.WriteString("}\n")
	return b.String()
}

// shortDuration prints 20m rather than time.Duration's 20m0s.
func shortDuration(d time.Duration) string {
	s := d.String()
	s = strings.TrimSuffix(s, "0s")
	if strings.HasSuffix(s, "h0m") {
		s = strings.TrimSuffix(s, "0m")
	}
	if s == "" {
		return "0s"
	}
	return s
}
