package main

import (
	"bytes"
	"fmt"
	"net"
	"path/filepath"
	"strings"
	"syscall"
	"testing"
	"time"

	"github.com/gridloupe/gridloupe/metrics"
	"github.com/gridloupe/gridloupe/store"
	"github.com/gridloupe/gridloupe/stream/pcm"
)

// stored3s returns the 3 s records stored in db.
func stored3s(t *testing.T, path string) []*metrics.Record {
	t.Helper()
	db, err := store.OpenReadOnly(path, 2*time.Second)
	if err != nil {
		t.Fatal(err)
	}
	defer db.Close()
	var got []*metrics.Record
	if err := db.Query(metrics.Int3s, time.Time{}, time.Time{}, func(r *metrics.Record) error { got = append(got, r.Clone()); return nil }); err != nil {
		t.Fatal(err)
	}
	return got
}

// TestRunPCMStdin: `run` reads raw PCM from standard input (the arecord
// pipe of the README); the pipe's end is a source failure (exit 1) after
// every measured window is stored.
func TestRunPCMStdin(t *testing.T) {
	dir := t.TempDir()
	db := filepath.Join(dir, "p.db")
	cfg := writeFile(t, dir, "p.yaml", countsCfg+fmt.Sprintf("source: {kind: pcm, path: \"-\", format: s16le}\nstore: {path: %s}\n", db))
	vals := countSamples(6.2)
	b := make([]byte, len(vals)*2)
	pcm.S16LE.Encode(b, vals)
	p := startDaemonStdin(t, bytes.NewReader(b), "run", "--config", cfg, "--log-level", "warn")
	code, _ := p.wait(t, 30*time.Second)
	if code != 1 || !strings.Contains(p.stderr.String(), "source stopped") {
		t.Fatalf("exit %d, stderr:\n%s\nwant exit 1 (the pipe ended)", code, p.stderr)
	}
	got := stored3s(t, db)
	var samples uint64
	for _, r := range got {
		samples += r.Samples
	}
	// 6.2 s: 30 windows of about 2047 samples at 50.02 Hz (10·10240/50.02)
	if samples < 29*2047 || samples > 31*2048 {
		t.Errorf("stored %d samples in %d 3 s records, want the ~30 windows of 6.2 s", samples, len(got))
	}
}

// TestRunGLF1TCP: `run` dials a GLF1 sender on loopback; a frame lost while
// it streams becomes a stored 3 s value flagged gap; SIGTERM stops the
// daemon (exit 0) although the link is silent.
func TestRunGLF1TCP(t *testing.T) {
	dir := t.TempDir()
	ln, err := net.Listen("tcp", "127.0.0.1:0")
	if err != nil {
		t.Fatal(err)
	}
	defer ln.Close()
	vals := countSamples(7)
	framed := framesOf(vals, 512, 30, -1)
	hold := make(chan struct{})
	defer close(hold)
	go func() {
		c, err := ln.Accept()
		if err != nil {
			return
		}
		defer c.Close()
		c.Write(framed)
		<-hold // keep the link open and silent
	}()
	db := filepath.Join(dir, "g.db")
	cfg := writeFile(t, dir, "g.yaml", countsCfg+fmt.Sprintf("source: {kind: pcm, connect: %q, format: s16le, framing: glf1}\nstore: {path: %s, commit_every: 100ms}\n", ln.Addr().String(), db))
	p := startDaemon(t, "run", "--config", cfg, "--log-level", "warn")
	time.Sleep(3 * time.Second) // the 7 s of frames are read at once; let the commits land
	if err := p.cmd.Process.Signal(syscall.SIGTERM); err != nil {
		t.Fatal(err)
	}
	code, took := p.wait(t, 10*time.Second)
	if code != 0 || took > 5*time.Second {
		t.Fatalf("exit %d after %v on SIGTERM with a silent link, want 0 within 5 s; stderr:\n%s", code, took, p.stderr)
	}
	got := stored3s(t, db)
	gaps := 0
	for _, r := range got {
		if r.Flags&metrics.FlagGap != 0 {
			gaps++
		}
	}
	if len(got) < 2 || gaps != 1 {
		t.Errorf("%d stored 3 s records, %d flagged gap; want the lost frame's 3 s value flagged", len(got), gaps)
	}
}
