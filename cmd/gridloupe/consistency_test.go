package main

import (
	"encoding/json"
	"fmt"
	"os"
	"path/filepath"
	"strings"
	"testing"
	"time"

	"github.com/gridloupe/gridloupe/cmd/internal/replaycmd"
	"github.com/gridloupe/gridloupe/config"
	"github.com/gridloupe/gridloupe/metrics"
	"github.com/gridloupe/gridloupe/store"
)

// readme returns the README's text.
func readme(t *testing.T) string {
	t.Helper()
	b, err := os.ReadFile("../../README.md")
	if err != nil {
		t.Fatal(err)
	}
	return string(b)
}

// TestConfigCheckAsRun: `config --check` rejects what `run` rejects at
// start (README "Commands": --check validates the file as run reads it): a
// missing mqtt.password_file and a missing csv source, with the same exit
// status and the key or path named, in both commands.
func TestConfigCheckAsRun(t *testing.T) {
	dir := t.TempDir()
	rec := writeCSV(t, dir, 4096, nil)
	for _, c := range []struct {
		name, extra, want string
		code              int // DESIGN "Errors and exit codes": config error 2, missing input 1
	}{
		{"password", fmt.Sprintf("source: {kind: csv, path: %s}\nmqtt: {broker: tcp://127.0.0.1:1, username: gw, password_file: nope.pass}\n", rec), "password_file", 2},
		{"source", "source: {kind: csv, path: missing.csv}\n", "missing.csv", 1},
	} {
		cfg := writeFile(t, dir, c.name+".yaml", singleCfg+c.extra+fmt.Sprintf("store: {path: %s}\n", filepath.Join(dir, c.name+".db")))
		for _, args := range [][]string{{"config", "--check", cfg}, {"run", "--config", cfg}} {
			r := runCmd(args...)
			if r.code != c.code || !strings.Contains(r.stderr, c.want) || r.stdout != "" {
				t.Errorf("%s %v: exit %d, stdout %q, stderr %q; want exit %d naming %s", c.name, args[0], r.code, r.stdout, r.stderr, c.code, c.want)
			}
		}
	}
	// the same file with the password file present passes both
	writeFile(t, dir, "nope.pass", "secret\n")
	cfg := filepath.Join(dir, "password.yaml")
	if r := runCmd("config", "--check", cfg); r.code != 0 || !strings.Contains(r.stdout, ": ok") {
		t.Errorf("config --check with the password file present: exit %d %q %q", r.code, r.stdout, r.stderr)
	}
}

// TestConfigCheckWithDefaults: --check and --defaults together are a usage
// error (exit 2, DESIGN "Errors and exit codes"), not one silently ignored.
func TestConfigCheckWithDefaults(t *testing.T) {
	cfg := writeFile(t, t.TempDir(), "c.yaml", singleCfg)
	for _, args := range [][]string{{"config", "--check", cfg, "--defaults"}, {"config", "--defaults", "--check", cfg}} {
		if r := runCmd(args...); r.code != 2 || r.stdout != "" {
			t.Errorf("%v: exit %d, stdout %d bytes; want exit 2 and nothing on stdout", args, r.code, len(r.stdout))
		}
	}
}

// runExitSentence is the README's statement of run's exit status for a
// file source, which --help must make too.
const runExitSentence = "0 when a csv or wav source reaches its end"

// TestRunFileSourceEnds: `run` on a CSV source that reaches its end stops
// cleanly with exit 0, as the README and `run --help` say; every log line
// names its part of the program with one attribute, `component`, once.
func TestRunFileSourceEnds(t *testing.T) {
	dir := t.TempDir()
	rec := writeCSV(t, dir, 10240*4, nil)
	cfg := writeFile(t, dir, "end.yaml", singleCfg+fmt.Sprintf(
		"source: {kind: csv, path: %s}\nstore: {path: %s}\nmqtt: {broker: embedded, listen: \"127.0.0.1:0\"}\n",
		rec, filepath.Join(dir, "e.db")))
	r := runCmd("run", "--config", cfg, "--log-format", "json", "--log-level", "debug")
	if r.code != 0 {
		t.Errorf("run on a CSV source to its end: exit %d, want 0\n%s", r.code, r.stderr)
	}
	if !strings.Contains(readme(t), runExitSentence) {
		t.Errorf("README lacks %q", runExitSentence)
	}
	if !strings.Contains(strings.Join(strings.Fields(runHelp), " "), runExitSentence) {
		t.Errorf("run --help lacks %q", runExitSentence)
	}
	comps := map[string]bool{}
	for _, line := range strings.Split(strings.TrimSpace(r.stderr), "\n") {
		if !strings.HasPrefix(line, "{") {
			continue
		}
		var m map[string]any
		if err := json.Unmarshal([]byte(line), &m); err != nil {
			t.Fatalf("log line not JSON: %v: %s", err, line)
		}
		if _, ok := m["part"]; ok {
			t.Errorf("log line uses the attribute part: %s", line)
		}
		if n := strings.Count(line, `"component":`); n > 1 {
			t.Errorf("log line names its component %d times: %s", n, line)
		}
		if c, ok := m["component"].(string); ok {
			comps[c] = true
		}
	}
	for _, c := range []string{"mqtt", "broker"} {
		if !comps[c] {
			t.Errorf("no log line with component=%s; components seen %v", c, comps)
		}
	}
}

// TestREADMEStatesToday: the README's opening paragraph claims only source
// kinds that `run` accepts today (config --defaults lists them): while no
// live ADC source exists, it does not say the gateway samples an ADC; once
// one does, it says so.
func TestREADMEStatesToday(t *testing.T) {
	first, _, _ := strings.Cut(strings.SplitN(readme(t), "\n\n", 3)[1], "\n## ")
	live := false
	for _, k := range []string{"iio", "pcm"} {
		if strings.Contains(runHelp, k) {
			live = true
		}
	}
	if !live && (strings.Contains(first, "It samples") || strings.Contains(first, "from a small ARM gateway with a multi-channel ADC")) {
		t.Errorf("README's opening paragraph claims live ADC sampling, which run does not offer yet:\n%s", first)
	}
	if live && !(strings.Contains(first, "IIO") && strings.Contains(first, "PCM")) {
		t.Errorf("README's opening paragraph does not say that run reads live IIO and PCM inputs, which it does:\n%s", first)
	}
}

// TestReplayTableFits: `replay --format table` on the bundled recording
// prints blocks within 80 columns with the site's IEEE 519 reference (TDD
// 8 %, IEEE 519-2014 Table 2 row 20<50 for ISC/IL 38) and marks the
// cabinet's 33 % TDD as above it; `--format wide` keeps the one-row layout.
func TestReplayTableFits(t *testing.T) {
	r := runCmd("replay", "--config", "../../testdata/north-weir-dc2.yaml", "--interval", "3s", "--format", "table", "../../testdata/north-weir-dc2.csv")
	if r.code != 0 {
		t.Fatalf("exit %d: %s", r.code, r.stderr)
	}
	for _, l := range strings.Split(r.stdout, "\n") {
		if len(l) > 80 {
			t.Errorf("line of %d columns: %q", len(l), l)
		}
	}
	for _, want := range []string{"TDD %<8", "THD-V %<8", "Table 2 row 20<50", "tdd_h50_pct", "33.29!"} {
		if !strings.Contains(r.stdout, want) {
			t.Errorf("table lacks %q:\n%s", want, r.stdout)
		}
	}
	w := runCmd("replay", "--config", "../../testdata/north-weir-dc2.yaml", "--interval", "3s", "--format", "wide", "../../testdata/north-weir-dc2.csv")
	if w.code != 0 || !strings.Contains(w.stdout, "start (UTC)") {
		t.Errorf("--format wide: exit %d\n%s", w.code, w.stdout)
	}
}

// TestShippedExampleHoldsAWeek: the shipped example's retention fits its
// store cap with the room `run` asks for (80 %), so the start-up warning
// never fires on it and a week of 3 s values is kept for `evaluate`
// (README "The store"); the figures are logged for the README.
func TestShippedExampleHoldsAWeek(t *testing.T) {
	for _, path := range []string{"../../testdata/north-weir-dc2.yaml", "../../testdata/demo-dc2.yaml"} {
		cfg, err := config.Load(path)
		if err != nil {
			t.Fatal(err)
		}
		s, _, err := replaycmd.SetupFromConfig(cfg)
		if err != nil {
			t.Fatal(err)
		}
		ret := map[metrics.Interval]time.Duration{}
		for k, v := range cfg.Store.Retention {
			iv, _ := metrics.ParseInterval(k)
			ret[iv] = v
		}
		need, room := retentionBytes(s, ret), int64(cfg.Store.MaxSizeMB)<<20*8/10
		if ret[metrics.Int3s] < 7*24*time.Hour || need > room {
			t.Errorf("%s: 3 s retention %v, retention needs %d MB of the %d MB run allows (80 %% of max_size_mb %d)",
				path, ret[metrics.Int3s], need>>20, room>>20, cfg.Store.MaxSizeMB)
		}
		t.Logf("%s: %d channels; 3 s record %d bytes (%.1f MB a day, %.0f MB a week); full record %d bytes; retention needs %d MB of %d MB",
			path, len(s.Channels), store.RecordBytesAt(s, metrics.Int3s), float64(store.RecordBytesAt(s, metrics.Int3s))*28800/1e6,
			float64(store.RecordBytesAt(s, metrics.Int3s))*28800*7/1e6, store.RecordBytes(s), need>>20, room>>20)
	}
}
