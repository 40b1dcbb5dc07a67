package store

import (
	"encoding/binary"
	"errors"
	"os"
	"path/filepath"
	"strings"
	"sync"
	"testing"
	"time"

	"github.com/gridloupe/gridloupe/metrics"
)

// bbolt's page header (from memory, bbolt internal/common/page.go): id
// uint64, flags uint16 (0x01 branch, 0x02 leaf, 0x04 meta, 0x10 freelist),
// count uint16, overflow uint32; little-endian on the platforms built here.
const (
	pageFlagsAt  = 8
	pageCountAt  = 10
	flagBranch   = 0x01
	flagLeaf     = 0x02
	testPageSize = 4096 // os.Getpagesize on linux/amd64, arm64 and armv7
)

// healthyStore writes a small store with records of every level, queued
// messages and an alarm state, closes it and returns its bytes.
func healthyStore(tb testing.TB, n int) []byte {
	tb.Helper()
	path := filepath.Join(tb.TempDir(), "healthy.db")
	db := openTest(tb, Options{Path: path})
	s := setup1([]int{1, 3, 5})
	if err := db.SetLayout(s); err != nil {
		tb.Fatal(err)
	}
	var recs []*metrics.Record
	for i := range n {
		for _, iv := range levels {
			recs = append(recs, smallRecord(s, iv, t0.Add(time.Duration(i)*3*time.Second), uint64(i)))
		}
	}
	if err := db.PutAggregates(recs); err != nil {
		tb.Fatal(err)
	}
	for i := range n / 4 {
		if _, err := db.Enqueue(msg(ClassTelemetry, strings.Repeat("x", 200+i))); err != nil {
			tb.Fatal(err)
		}
	}
	if _, err := db.CommitAlarm(AlarmState{Name: "thd-va", Raised: true, Since: t0}, msg(ClassAlarm, "{}")); err != nil {
		tb.Fatal(err)
	}
	if err := db.Close(); err != nil {
		tb.Fatal(err)
	}
	b, err := os.ReadFile(path)
	if err != nil {
		tb.Fatal(err)
	}
	return b
}

// pagesOf returns the ids of the pages whose flags are flag.
func pagesOf(b []byte, flag uint16) []int {
	var ids []int
	for id := 2; (id+1)*testPageSize <= len(b); id++ {
		if binary.LittleEndian.Uint16(b[id*testPageSize+pageFlagsAt:]) == flag {
			ids = append(ids, id)
		}
	}
	return ids
}

// useAll opens path both ways and reads everything; it returns the first error.
func useAll(path string) error {
	for _, ro := range []bool{true, false} {
		db, err := Open(Options{Path: path, ReadOnly: ro, NoSync: true, Timeout: time.Second})
		if err != nil {
			return err
		}
		var errs []error
		for _, iv := range levels {
			errs = append(errs, db.Query(iv, time.Time{}, time.Time{}, func(*metrics.Record) error { return nil }))
			_, err := db.Last(iv, 3)
			errs = append(errs, err)
		}
		_, err = db.Pending(0, 100)
		errs = append(errs, err)
		_, err = db.AlarmStates()
		errs = append(errs, err)
		if !ro {
			s := setup1([]int{1, 3, 5})
			errs = append(errs, db.SetLayout(s), db.PutAggregates([]*metrics.Record{smallRecord(s, metrics.Int3s, t0, 1)}))
			_, err = db.Prune(t0)
			errs = append(errs, err)
		}
		_ = db.Stats()
		errs = append(errs, db.Close())
		if err := errors.Join(errs...); err != nil {
			return err
		}
	}
	return nil
}

func TestDamagedStore(t *testing.T) {
	t.Parallel()
	good := healthyStore(t, 600)
	leaves, branches := pagesOf(good, flagLeaf), pagesOf(good, flagBranch)
	if len(leaves) < 3 || len(branches) < 1 {
		t.Fatalf("healthy store has %d leaf and %d branch pages; the cases need 3 and 1", len(leaves), len(branches))
	}
	patch := func(f func(b []byte) []byte) func() []byte {
		return func() []byte { return f(append([]byte(nil), good...)) }
	}
	cases := []struct {
		name string
		file func() []byte
	}{
		{"truncated to half", patch(func(b []byte) []byte { return b[:len(b)/2/testPageSize*testPageSize] })},
		{"truncated inside the last leaf", patch(func(b []byte) []byte { return b[:(leaves[len(leaves)-1]+1)*testPageSize-100] })},
		{"leaf page zeroed", patch(func(b []byte) []byte {
			clear(b[leaves[1]*testPageSize : (leaves[1]+1)*testPageSize])
			return b
		})},
		{"leaf page type changed", patch(func(b []byte) []byte {
			binary.LittleEndian.PutUint16(b[leaves[2]*testPageSize+pageFlagsAt:], 0x20)
			return b
		})},
		{"leaf element count huge", patch(func(b []byte) []byte {
			binary.LittleEndian.PutUint16(b[leaves[0]*testPageSize+pageCountAt:], 0xffff)
			return b
		})},
		{"branch page filled with 0xff", patch(func(b []byte) []byte {
			p := b[branches[0]*testPageSize : (branches[0]+1)*testPageSize]
			for i := 16; i < len(p); i++ {
				p[i] = 0xff
			}
			return b
		})},
		{"both meta pages zeroed", patch(func(b []byte) []byte { clear(b[:2*testPageSize]); return b })},
		{"not a store at all", func() []byte { return []byte(strings.Repeat("site: north-weir-dc2\n", 600)) }},
	}
	for _, tc := range cases {
		t.Run(tc.name, func(t *testing.T) {
			t.Parallel()
			path := filepath.Join(t.TempDir(), "gridloupe.db")
			if err := os.WriteFile(path, tc.file(), 0o600); err != nil {
				t.Fatal(err)
			}
			err := useAll(path)
			if !errors.Is(err, ErrDamaged) {
				t.Fatalf("got %v, want ErrDamaged", err)
			}
			if !strings.Contains(err.Error(), path) || !strings.Contains(err.Error(), "damaged store") {
				t.Errorf("message %q does not say \"damaged store\" with the path", err)
			}
		})
	}
	t.Run("healthy", func(t *testing.T) {
		path := filepath.Join(t.TempDir(), "gridloupe.db")
		if err := os.WriteFile(path, good, 0o600); err != nil {
			t.Fatal(err)
		}
		if err := useAll(path); err != nil {
			t.Fatalf("healthy store: %v", err)
		}
	})
}

var (
	fuzzBaseOnce sync.Once
	fuzzBase     []byte
)

// FuzzDamagedStore patches a healthy store file with the fuzzer's bytes
// (each 3 bytes: a 2-byte offset in units of 7 bytes, then the new byte) and
// opens, queries, writes and closes it: errors are fine, a panic or a fault
// is not.
func FuzzDamagedStore(f *testing.F) {
	f.Add([]byte{0, 2, 0xff})
	f.Add([]byte{0x02, 0x49, 0x00, 0x04, 0x92, 0x7f})
	f.Add([]byte{0x09, 0x25, 0x10, 0x09, 0x26, 0xff, 0x12, 0x49, 0x03})
	f.Fuzz(func(t *testing.T, p []byte) {
		fuzzBaseOnce.Do(func() { fuzzBase = healthyStore(t, 200) })
		b := append([]byte(nil), fuzzBase...)
		for i := 0; i+2 < len(p); i += 3 {
			off := int(binary.BigEndian.Uint16(p[i:])) * 7 % len(b)
			b[off] = p[i+2]
		}
		path := filepath.Join(t.TempDir(), "fuzz.db")
		if err := os.WriteFile(path, b, 0o600); err != nil {
			t.Fatal(err)
		}
		_ = useAll(path)
	})
}

// TestOpenErrorWording: a store that cannot be read is not blamed on its
// folder's write permission (README, The store).
func TestOpenErrorWording(t *testing.T) {
	t.Parallel()
	dir := t.TempDir()
	existing := filepath.Join(dir, "g.db")
	if err := os.WriteFile(existing, nil, 0o600); err != nil {
		t.Fatal(err)
	}
	cases := []struct {
		name      string
		opts      Options
		want, not string
	}{
		{"read-only, unreadable", Options{Path: existing, ReadOnly: true}, "cannot read " + existing, "writable"},
		{"writable, file not permitted", Options{Path: existing}, "cannot open " + existing + " for reading and writing", "writable?"},
		{"writable, folder not permitted", Options{Path: filepath.Join(dir, "new.db")}, "is " + dir + " writable?", "for reading"},
	}
	for _, tc := range cases {
		got := openError(tc.opts, os.ErrPermission).Error()
		if !strings.Contains(got, tc.want) || strings.Contains(got, tc.not) {
			t.Errorf("%s: %q, want %q and not %q", tc.name, got, tc.want, tc.not)
		}
	}
}
