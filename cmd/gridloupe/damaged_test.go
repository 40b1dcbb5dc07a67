package main

import (
	"os"
	"path/filepath"
	"strings"
	"testing"
	"time"

	"github.com/gridloupe/gridloupe/metrics"
	"github.com/gridloupe/gridloupe/store"
	"github.com/gridloupe/gridloupe/stream/mqtt/mqtttest"
)

// damageStore overwrites every page past the two meta pages of a store run
// has written (README, Bad conditions: a power-loss corruption). All of
// them, so the root page is hit whatever the layout: bbolt writes each
// commit into whatever pages are free, and overwriting only the first
// quarter of the file once missed every live page in a CI race pass.
func damageStore(t *testing.T, path string) {
	t.Helper()
	b, err := os.ReadFile(path)
	if err != nil {
		t.Fatal(err)
	}
	const page = 4096
	for i := 2 * page; i < len(b); i++ {
		b[i] = 0xA5
	}
	if err := os.WriteFile(path, b, 0o600); err != nil {
		t.Fatal(err)
	}
}

// TestRunSetsDamagedStoreAside: export and evaluate on a damaged store exit
// 1 with "damaged store" and the path, never a panic; run sets the file
// aside, says so in its log, its retained status and its first health
// message, and keeps measuring into a fresh store; with store.on_damage:
// fail it exits 1 instead (README, The store).
func TestRunSetsDamagedStoreAside(t *testing.T) {
	mosq := mqtttest.Start(t)
	base := "gridloupe/test-bench/gw-test"
	dir := t.TempDir()
	db := filepath.Join(dir, "gl.db")
	cfg := daemonConfig(t, dir, mosq.URL())
	editConfig(t, cfg, "speed: 60", "speed: 0", "telemetry: [3s]", "telemetry: [10min]")
	if r := runCmd("run", "--config", cfg, "--stop-after", "30s", "--log-level", "error"); r.code != 0 {
		t.Fatalf("first run: exit %d: %s", r.code, r.stderr)
	}
	damageStore(t, db)

	for _, args := range [][]string{
		{"export", "--store", db, "--interval", "3s"},
		{"evaluate", "--config", cfg, "--store", db},
	} {
		r := runCmd(args...)
		if r.code != 1 || !strings.Contains(r.stderr, "damaged store") || !strings.Contains(r.stderr, db) || strings.Contains(r.stderr, "panic") {
			t.Errorf("%s: exit %d, stderr %q; want 1 with \"damaged store\" and the path", args[0], r.code, r.stderr)
		}
	}

	failCfg := writeFile(t, dir, "fail.yaml", strings.Replace(readFile(t, cfg), "commit_every: 1s}", "commit_every: 1s, on_damage: fail}", 1))
	if r := runCmd("run", "--config", failCfg, "--stop-after", "30s"); r.code != 1 || !strings.Contains(r.stderr, "damaged store") {
		t.Errorf("on_damage fail: exit %d, stderr %q; want 1 and the message", r.code, r.stderr)
	}

	sub := mqtttest.Subscribe(t, mosq.URL(), base+"/#")
	r := runCmd("run", "--config", cfg, "--stop-after", "25m")
	if r.code != 0 || !strings.Contains(r.stderr, "damaged store set aside") {
		t.Fatalf("run on the damaged store: exit %d, want 0 and a log line; stderr:\n%s", r.code, r.stderr)
	}
	aside, _ := filepath.Glob(db + ".damaged-*")
	if len(aside) != 1 {
		t.Fatalf("set-aside files %v, want one", aside)
	}
	fresh, err := store.OpenReadOnly(db, time.Second)
	if err != nil {
		t.Fatalf("fresh store: %v", err)
	}
	if n := fresh.Stats().Records[metrics.Int3s]; n < 400 {
		t.Errorf("fresh store holds %d 3 s records, want the 25 minutes measured (500)", n)
	}
	fresh.Close()
	msgs := sub.WaitFor(t, "status notice and health notice", 20*time.Second, func(m []mqtttest.Message) bool {
		return count(m, base+"/status", func(p payload) bool {
			n, _ := p["notice"].(string)
			return strings.Contains(n, "damaged store set aside")
		}) >= 1 && count(m, base+"/health", func(p payload) bool {
			n, _ := p["store_notice"].(string)
			return strings.Contains(n, aside[0])
		}) >= 1
	})
	if n := count(msgs, base+"/health", func(p payload) bool { return p["store_notice"] != nil }); n != 1 {
		t.Errorf("%d health messages carry the notice, want only the first", n)
	}
}
