package main

import (
	"os"
	"regexp"
	"strings"
	"testing"

	"github.com/gridloupe/gridloupe/config"
)

// TestCheckSuggestsAlarms: `config --check` on a config without alarm rules
// prints the usual starting rules as YAML, and those lines, pasted into the
// file, load as the same rules (README "Alarm rules": TDD above the IEEE
// 519-2014 Table 2 limit, 8 % for North Weir's ISC/IL of 38; voltage THD
// above 8 %, Table 1 at ≤ 1 kV; total PF below 0.90).
func TestCheckSuggestsAlarms(t *testing.T) {
	b, err := os.ReadFile("../../testdata/north-weir-dc2.yaml")
	if err != nil {
		t.Fatal(err)
	}
	// cut the alarms block: from "alarms:" to the next top-level key
	text := string(b)
	i := strings.Index(text, "\nalarms:")
	if i < 0 {
		t.Fatal("example config has no alarms block")
	}
	rest := text[i+1:]
	next := regexp.MustCompile(`\n[a-z_]+:`).FindStringIndex(rest)
	bare := text[:i+1]
	if next != nil {
		bare += rest[next[0]+1:]
	}
	dir := t.TempDir()
	path := writeFile(t, dir, "bare.yaml", bare)
	r := runCmd("config", "--check", path)
	if r.code != 0 {
		t.Fatalf("exit %d: %s", r.code, r.stderr)
	}
	for _, want := range []string{
		"metric: tdd_h50_pct, channel: ia, level: 10min, above: 8,",
		"metric: thd_h50_pct, channel: va, level: 10min, above: 8,",
		"metric: pf, phase: total, level: 10min, below: 0.9,",
		"{name: supply-dip, metric: event, kind: [dip, interruption], off_delay: 10m, severity: warning}",
	} {
		if !strings.Contains(r.stdout, want) {
			t.Errorf("suggestion lacks %q:\n%s", want, r.stdout)
		}
	}
	yaml := r.stdout[strings.Index(r.stdout, "alarms:\n"):]
	withRules := writeFile(t, dir, "with.yaml", bare+"\n"+yaml)
	cfg, err := config.Load(withRules)
	if err != nil {
		t.Fatalf("the suggested rules do not load: %v", err)
	}
	if len(cfg.Alarms) != 8 {
		t.Errorf("%d rules loaded, want 8 (3 TDD, 3 THD, 1 PF, 1 event)", len(cfg.Alarms))
	}
	if again := runCmd("config", "--check", withRules); strings.Contains(again.stdout, "no alarm rules") {
		t.Errorf("a config with rules still gets the suggestion: %s", again.stdout)
	}
}
