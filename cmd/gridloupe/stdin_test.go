package main

import (
	"bytes"
	"context"
	"os"
	"testing"
)

// TestReplayStdin: INPUT "-" reads the CSV from standard input and prints
// exactly what the same file gives (README "replay").
func TestReplayStdin(t *testing.T) {
	dir := t.TempDir()
	cfg := writeFile(t, dir, "cfg.yaml", singleCfg)
	in := writeCSV(t, dir, 10240*3, nil)
	want := runCmd("replay", "--config", cfg, "--interval", "3s", in)
	if want.code != 0 {
		t.Fatalf("file: exit %d: %s", want.code, want.stderr)
	}
	data, err := os.ReadFile(in)
	if err != nil {
		t.Fatal(err)
	}
	var out, errb bytes.Buffer
	if err := run(context.Background(), []string{"replay", "--config", cfg, "--interval", "3s", "-"}, bytes.NewReader(data), &out, &errb); err != nil {
		t.Fatalf("stdin: %v (%s)", err, errb.String())
	}
	if out.String() != want.stdout || out.Len() == 0 {
		t.Errorf("stdin output differs from the file's:\n%s\nwant\n%s", out.String(), want.stdout)
	}
}
