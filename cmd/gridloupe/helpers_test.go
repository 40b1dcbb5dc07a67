package main

import (
	"bufio"
	"fmt"
	"os"
	"path/filepath"
	"strings"
	"testing"

	"github.com/gridloupe/gridloupe/cmd/internal/replaycmd"
	"github.com/gridloupe/gridloupe/config"
	"github.com/gridloupe/gridloupe/metrics"
	"github.com/gridloupe/gridloupe/store"
)

// Set-up shared by the command's tests: a config plus a real bbolt store
// with its layout, a buffered file writer for invented recordings, the
// three-phase channel list and the supply-event profile several tests feed.

// wyeChannels is the channel list of a three-phase four-wire hook-up of the
// invented North Weir DC-2 cabinet (DESIGN.md scenario): three voltages
// and three CTs, in that order.
const wyeChannels = `channels:
  - {name: va, kind: voltage, phase: a}
  - {name: vb, kind: voltage, phase: b}
  - {name: vc, kind: voltage, phase: c}
  - {name: ia, kind: current, phase: a}
  - {name: ib, kind: current, phase: b}
  - {name: ic, kind: current, phase: c}
`

// newEvalStore writes cfgText as north-weir.yaml in a fresh temporary
// folder, opens a real bbolt store gl.db beside it (NoSync, to spare the
// test machine's disk) and gives it the config's layout. The caller puts
// its records and closes db before a command opens the file; a cleanup
// closes it as well (Close may be called twice), so a test that stops
// early leaves no file lock behind.
func newEvalStore(t *testing.T, cfgText string) (cfgPath, dbPath string, setup *metrics.Setup, db *store.DB) {
	t.Helper()
	dir := t.TempDir()
	cfgPath = writeFile(t, dir, "north-weir.yaml", cfgText)
	cfg, err := config.Load(cfgPath)
	if err != nil {
		t.Fatal(err)
	}
	setup, _, err = replaycmd.SetupFromConfig(cfg)
	if err != nil {
		t.Fatal(err)
	}
	dbPath = filepath.Join(dir, "gl.db")
	db, err = store.Open(store.Options{Path: dbPath, NoSync: true})
	if err != nil {
		t.Fatal(err)
	}
	t.Cleanup(func() { db.Close() })
	if err := db.SetLayout(setup); err != nil {
		t.Fatal(err)
	}
	return cfgPath, dbPath, setup, db
}

// editConfig rewrites the config file at path, replacing in turn each old
// text of the (old, new) pairs by its new one, once. An old text missing
// from the file fails the test, so an edit never silently misses.
func editConfig(t *testing.T, path string, pairs ...string) {
	t.Helper()
	if len(pairs)%2 != 0 {
		t.Fatalf("editConfig: %d texts, want (old, new) pairs", len(pairs))
	}
	text := readFile(t, path)
	for i := 0; i < len(pairs); i += 2 {
		if !strings.Contains(text, pairs[i]) {
			t.Fatalf("editConfig: %s has no %q to replace", path, pairs[i])
		}
		text = strings.Replace(text, pairs[i], pairs[i+1], 1)
	}
	if err := os.WriteFile(path, []byte(text), 0o644); err != nil {
		t.Fatal(err)
	}
}

// simulateBus simulates duration of the shipped several-circuit example
// (testdata/north-weir-bus.yaml: the invented North Weir bus) into bus.csv
// in a fresh temporary folder and returns the config and recording paths.
func simulateBus(t *testing.T, duration string) (cfg, rec string) {
	t.Helper()
	cfg = filepath.Join("..", "..", "testdata", "north-weir-bus.yaml")
	rec = filepath.Join(t.TempDir(), "bus.csv")
	if r := runCmd("simulate", "--config", cfg, "-o", rec, "--duration", duration); r.code != 0 {
		t.Fatalf("simulate: %d %s", r.code, r.stderr)
	}
	return cfg, rec
}

// writeBuffered creates path, lets fill write its contents through a
// buffer, then checks the flush and the close; it returns path.
func writeBuffered(t *testing.T, path string, fill func(w *bufio.Writer)) string {
	t.Helper()
	f, err := os.Create(path)
	if err != nil {
		t.Fatal(err)
	}
	w := bufio.NewWriter(f)
	fill(w)
	if err := w.Flush(); err != nil {
		f.Close()
		t.Fatal(err)
	}
	if err := f.Close(); err != nil {
		t.Fatal(err)
	}
	return path
}

// TestWriteBuffered: what fill writes reaches the file whole, also past
// the buffer's 4096 bytes (bufio's default size), so no recording loses
// its tail to a missed flush.
func TestWriteBuffered(t *testing.T) {
	t.Parallel()
	var want []byte
	p := writeBuffered(t, filepath.Join(t.TempDir(), "rows.csv"), func(w *bufio.Writer) {
		for n := range 1000 {
			fmt.Fprintf(w, "%d,%d\n", n, n*n)
			want = fmt.Appendf(want, "%d,%d\n", n, n*n)
		}
	})
	got, err := os.ReadFile(p)
	if err != nil {
		t.Fatal(err)
	}
	if len(want) <= 4096 || string(got) != string(want) {
		t.Errorf("file holds %d bytes, want the %d written (more than one 4096-byte buffer)", len(got), len(want))
	}
}

// supplyEvents is the phase RMS (V) of an invented North Weir DC-2 supply
// over a 4.4 s recording (writeEventCSV): a dip on va and vb from 0.5123 s
// to 0.6323 s (126.5 V and 161 V), a swell on vc from 1.6071 s to 1.8071 s
// (270.25 V) and an interruption of all three from 2.8017 s to 3.4017 s;
// 230 V otherwise. Phase c is index 2.
func supplyEvents(c int, tt float64) float64 {
	switch {
	case tt >= 0.5123 && tt < 0.6323 && c < 2:
		return []float64{126.5, 161}[c]
	case tt >= 1.6071 && tt < 1.8071 && c == 2:
		return 270.25
	case tt >= 2.8017 && tt < 3.4017:
		return 0
	}
	return 230
}

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
