//go:build linux

package store

import (
	"errors"
	"os"
	"os/exec"
	"path/filepath"
	"strconv"
	"syscall"
	"testing"
	"time"

	"github.com/gridloupe/gridloupe/metrics"
)

// killHelperEnv makes the test binary act as a writer that SIGKILLs itself
// inside the transaction of batch N, between the records and their messages.
const killHelperEnv = "GRIDLOUPE_STORE_KILL_AT"

const killBatchRecs = 8

func killHelper(t *testing.T, path string, at int) {
	db, err := Open(Options{Path: path})
	if err != nil {
		t.Fatal(err)
	}
	s := setupV()
	if err := db.SetLayout(s); err != nil {
		t.Fatal(err)
	}
	start := t0
	if last, err := db.Last(metrics.Int3s, 1); err == nil && len(last) == 1 {
		start = last[0].Start.Add(3 * time.Second)
	}
	for b := 1; ; b++ {
		if b == at {
			db.hookMidBatch = func() { _ = syscall.Kill(os.Getpid(), syscall.SIGKILL) }
		}
		var recs []*metrics.Record
		var msgs []Message
		for range killBatchRecs {
			recs = append(recs, smallRecord(s, metrics.Int3s, start, 0))
			msgs = append(msgs, msg(ClassTelemetry, start.Format(time.RFC3339)))
			start = start.Add(3 * time.Second)
		}
		if _, err := db.PutBatch(recs, msgs); err != nil {
			t.Fatal(err)
		}
	}
}

// TestKillMidBatch: a writer killed (SIGKILL) inside a batch, after its
// records were put and before their messages, leaves a file that passes
// bbolt's check and holds, for every stored record, its queued message and
// no message without its record: both or neither (README, The store).
func TestKillMidBatch(t *testing.T) {
	if v := os.Getenv(killHelperEnv); v != "" {
		at, _ := strconv.Atoi(v)
		killHelper(t, os.Getenv(killHelperEnv+"_PATH"), at)
		return
	}
	path := filepath.Join(t.TempDir(), "kill.db")
	total := 0
	for round, at := range []int{3, 1, 5, 2} {
		cmd := exec.Command(os.Args[0], "-test.run=^TestKillMidBatch$")
		cmd.Env = append(os.Environ(), killHelperEnv+"="+strconv.Itoa(at), killHelperEnv+"_PATH="+path)
		err := cmd.Run()
		if errors.Is(err, syscall.ENOEXEC) {
			// Under user-mode emulation (go test -exec qemu-…-static) the
			// test binary is foreign to the kernel and cannot re-exec itself.
			t.Skipf("cannot re-run the test binary as a child here: %v", err)
		}
		var ee *exec.ExitError
		if !errors.As(err, &ee) || ee.ProcessState.Sys().(syscall.WaitStatus).Signal() != syscall.SIGKILL {
			t.Fatalf("round %d: helper ended with %v, want SIGKILL", round, err)
		}
		total += (at - 1) * killBatchRecs
		db, err := Open(Options{Path: path, ReadOnly: true})
		if err != nil {
			t.Fatalf("round %d: %v", round, err)
		}
		if err := db.Check(); err != nil {
			t.Errorf("round %d: %v", round, err)
		}
		stored := map[string]bool{}
		if err := db.Query(metrics.Int3s, time.Time{}, time.Time{}, func(r *metrics.Record) error {
			stored[r.Start.Format(time.RFC3339)] = true
			return nil
		}); err != nil {
			t.Fatal(err)
		}
		pending, err := db.Pending(0, 10000)
		if err != nil {
			t.Fatal(err)
		}
		queued := map[string]bool{}
		for _, m := range pending {
			queued[string(m.Payload)] = true
			if !stored[string(m.Payload)] {
				t.Errorf("round %d: message for %s without its record", round, m.Payload)
			}
		}
		for k := range stored {
			if !queued[k] {
				t.Errorf("round %d: record %s without its message", round, k)
			}
		}
		if len(stored) != total {
			t.Errorf("round %d: %d records stored, want the %d of the whole batches before each kill", round, len(stored), total)
		}
		_ = db.Close()
	}
}
