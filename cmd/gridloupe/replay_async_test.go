package main

import (
	"bytes"
	"context"
	"errors"
	"strings"
	"testing"
)

// fullDisk accepts n bytes, then fails every write, as a full disk does.
type fullDisk struct {
	n   int
	got bytes.Buffer
}

var errFullDisk = errors.New("no space left on device")

func (f *fullDisk) Write(p []byte) (int, error) {
	if len(p) > f.n {
		k := f.n
		f.got.Write(p[:k])
		f.n = 0
		return k, errFullDisk
	}
	f.n -= len(p)
	f.got.Write(p)
	return len(p), nil
}

// TestReplayWriteError: when standard output fails part way, replay (whose
// encoding runs on a goroutine of its own) stops with exit status 1 and the
// encoder's error, and what reached the output is the start of the whole
// output, byte for byte. Both at the first write and in the middle.
func TestReplayWriteError(t *testing.T) {
	dir := t.TempDir()
	cfg := writeFile(t, dir, "cfg.yaml", singleCfg)
	in := writeCSV(t, dir, 10240*8, nil) // 40 windows of 200 ms
	whole := runCmd("replay", "--config", cfg, in)
	if whole.code != 0 || len(whole.stdout) < 10000 {
		t.Fatalf("whole run: exit %d, %d bytes of output, stderr %q", whole.code, len(whole.stdout), whole.stderr)
	}
	for _, n := range []int{0, len(whole.stdout) / 3} {
		out := &fullDisk{n: n}
		var errb bytes.Buffer
		err := run(context.Background(), []string{"replay", "--config", cfg, in}, strings.NewReader(""), out, &errb)
		if !errors.Is(err, errFullDisk) || exitCode(err) != 1 {
			t.Errorf("after %d bytes: %v (exit %d), want the write error with exit status 1", n, err, exitCode(err))
		}
		if out.got.String() != whole.stdout[:n] {
			t.Errorf("after %d bytes: the output is not the start of the whole output", n)
		}
	}
}
