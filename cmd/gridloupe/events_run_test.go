package main

import (
	"encoding/json"
	"os"
	"path/filepath"
	"strings"
	"testing"
)

// TestRunStoresEventsListedAndDrawn: under run (a CSV source, a real bbolt
// store), the recording's dip, swell and
// interruption are stored; `events` lists them (table and jsonl) and
// `waveform` draws one as an SVG with the threshold lines and the event's
// own numbers in it.
func TestRunStoresEventsListedAndDrawn(t *testing.T) {
	t.Parallel()
	dir := t.TempDir()
	csv := writeEventCSV(t, dir, 4.4, supplyEvents)
	db := filepath.Join(dir, "gl.db")
	cfg := writeFile(t, dir, "dc2.yaml", eventsCfg+"source: {kind: csv, path: "+csv+"}\nstore: {path: "+db+", commit_every: 1s}\n")
	if res := runCmd("run", "--config", cfg); res.code != 0 {
		t.Fatalf("run: exit %d: %s", res.code, res.stderr)
	}
	res := runCmd("events", "--store", db, "--format", "jsonl")
	if res.code != 0 {
		t.Fatalf("events: exit %d: %s", res.code, res.stderr)
	}
	lines := strings.Split(strings.TrimSpace(res.stdout), "\n")
	kinds := []string{"dip", "swell", "interruption"}
	if len(lines) != 3 {
		t.Fatalf("%d events listed, want 3 (src: the recording's closed form):\n%s", len(lines), res.stdout)
	}
	var ids []string
	for i, l := range lines {
		var e struct {
			Event string `json:"event"`
			ID    string `json:"id"`
		}
		if err := json.Unmarshal([]byte(l), &e); err != nil || e.Event != kinds[i] {
			t.Fatalf("line %d: %v %s, want %s", i, err, l, kinds[i])
		}
		ids = append(ids, e.ID)
	}
	tab := runCmd("events", "--store", db, "--from", "2026-01-01T00:00:00Z")
	if tab.code != 0 || !strings.Contains(tab.stdout, "interruption") || !strings.Contains(tab.stdout, ids[0]) {
		t.Fatalf("events table: exit %d\n%s%s", tab.code, tab.stdout, tab.stderr)
	}
	svgPath := filepath.Join(dir, "dip.svg")
	if p := os.Getenv("GRIDLOUPE_SVG_OUT"); p != "" {
		svgPath = p // to look at the drawing: GRIDLOUPE_SVG_OUT=/tmp/dip.svg go test -run TestRunStores ./cmd/gridloupe
	}
	w := runCmd("waveform", "--store", db, "--id", ids[0], "-o", svgPath, "--site", "North Weir DC-2")
	if w.code != 0 {
		t.Fatalf("waveform: exit %d: %s", w.code, w.stderr)
	}
	svg, err := os.ReadFile(svgPath)
	if err != nil {
		t.Fatal(err)
	}
	for _, want := range []string{"<svg", "dip 90 % · ends at 92 %", "swell 110 % · ends below 108 %", "interruption 5 %", "residual 126.5 V", "va", "ia", "time from the event start (ms)", "not a protective device"} {
		if !strings.Contains(string(svg), want) {
			t.Errorf("SVG lacks %q", want)
		}
	}
	if bad := runCmd("waveform", "--store", db, "--id", "dip-nope", "-o", svgPath); bad.code != 1 || !strings.Contains(bad.stderr, "no such event") {
		t.Errorf("unknown id: exit %d: %s", bad.code, bad.stderr)
	}
}
