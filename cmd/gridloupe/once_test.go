package main

import (
	"fmt"
	"os"
	"path/filepath"
	"strings"
	"testing"
)

// TestRunBadCellPrintedOnce: a non-numeric CSV cell under `run` ends the
// run with exit 1 and its file:line:column message appears once on
// stderr: the error is returned, not also logged (README "Errors": a
// non-numeric CSV cell is a file:line:column message, exit 1).
func TestRunBadCellPrintedOnce(t *testing.T) {
	dir := t.TempDir()
	rec := writeCSV(t, dir, 10240, nil)
	b, err := os.ReadFile(rec)
	if err != nil {
		t.Fatal(err)
	}
	lines := strings.Split(string(b), "\n")
	k := len(lines) / 2
	cells := strings.Split(lines[k], ",")
	cells[len(cells)-1] = "abc"
	lines[k] = strings.Join(cells, ",")
	bad := writeFile(t, dir, "bad.csv", strings.Join(lines, "\n"))
	cfg := writeFile(t, dir, "bad.yaml", singleCfg+fmt.Sprintf(
		"source: {kind: csv, path: %s}\nstore: {path: %s}\n", bad, filepath.Join(dir, "b.db")))
	r := runCmd("run", "--config", cfg)
	if r.code != 1 {
		t.Errorf("exit %d, want 1\n%s", r.code, r.stderr)
	}
	if n := strings.Count(r.stderr, "is not a number"); n != 1 {
		t.Errorf("the bad cell's message appears %d times on stderr, want once:\n%s", n, r.stderr)
	}
}
