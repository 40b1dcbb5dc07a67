package main

import (
	"os"
	"path/filepath"
	"strings"
	"testing"
)

const demoCfg = "../../testdata/demo-dc2.yaml"

// TestDemoDirSafety: --dir on a folder holding anything is refused (exit
// 2) and the file in it is left alone.
func TestDemoDirSafety(t *testing.T) {
	dir := t.TempDir()
	keep := writeFile(t, dir, "notes.txt", "someone's file\n")
	r := runCmd("demo", "--config", demoCfg, "--speed", "0", "--stop-after", "10s", "--dir", dir)
	if r.code != 2 || !strings.Contains(r.stderr, "not empty") || r.stdout != "" {
		t.Errorf("demo --dir on a non-empty folder: exit %d, stderr %q; want exit 2 and nothing on stdout", r.code, r.stderr)
	}
	if b, err := os.ReadFile(keep); err != nil || string(b) != "someone's file\n" {
		t.Errorf("the folder's file was touched: %q %v", b, err)
	}
	if r := runCmd("demo", "--config", filepath.Join(dir, "missing.yaml"), "--speed", "0", "--stop-after", "10s"); r.code != 2 {
		t.Errorf("missing demo config: exit %d, want 2", r.code)
	}
}

// TestDemoTeaches: a short demo prints the config it read and the rules'
// thresholds beside the watched values; the clean-up advice for an empty
// folder it did not create names only the store file; the look-back
// commands it prints run as printed (exit 0).
func TestDemoTeaches(t *testing.T) {
	dir := t.TempDir()
	r := runCmd("demo", "--config", demoCfg, "--speed", "0", "--stop-after", "1m", "--duration", "2m", "--dir", dir)
	if r.code != 0 {
		t.Fatalf("demo: exit %d\n%s", r.code, r.stderr)
	}
	db := filepath.Join(dir, "gridloupe.db")
	for _, want := range []string{
		"config: " + demoCfg,
		"reactor-wear  ia tdd_h50_pct above 45", // the rule, as testdata/demo-dc2.yaml states it
		" >45 ", " >8 ", " <0.85",               // thresholds beside the watched values
		"clean up:  rm " + db,
	} {
		if !strings.Contains(r.stdout, want) {
			t.Errorf("demo output lacks %q:\n%s", want, r.stdout)
		}
	}
	if strings.Contains(r.stdout, "rm -r") {
		t.Errorf("clean-up advice removes a folder the demo did not create:\n%s", r.stdout)
	}
	var ran int
	for _, line := range strings.Split(r.stdout, "\n") {
		_, cmd, ok := strings.Cut(line, "go run ./cmd/gridloupe ")
		if !ok {
			continue
		}
		ran++
		res := runCmd(strings.Fields(cmd)...)
		if res.code != 0 || res.stdout == "" {
			t.Errorf("printed command %q: exit %d, %d bytes out\n%s", cmd, res.code, len(res.stdout), res.stderr)
		}
	}
	if ran != 3 {
		t.Errorf("%d look-back commands printed, want 3 (export, evaluate and events):\n%s", ran, r.stdout)
	}
}
