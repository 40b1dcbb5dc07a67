//go:build linux

package store

import (
	"bufio"
	"fmt"
	"math/rand/v2"
	"os"
	"runtime"
	"strconv"
	"strings"
	"testing"
	"time"
	"unsafe"

	"golang.org/x/sys/unix"

	"github.com/gridloupe/gridloupe/metrics"
)

// sentinel is the byte pattern written where releaseMapped must not reach.
// MADV_DONTNEED turns anonymous private pages into zero-fill pages (madvise(2),
// Linux man-pages), so a released sentinel reads back as zeros.
const sentinel = 0xA5

// mapping returns the address range [start, end) of the mapping that starts
// at addr, read from /proc/self/maps (proc(5)).
func mapping(tb testing.TB, addr uintptr) (start, end uintptr) {
	tb.Helper()
	f, err := os.Open("/proc/self/maps")
	if err != nil {
		tb.Fatal(err)
	}
	defer f.Close()
	sc := bufio.NewScanner(f)
	for sc.Scan() {
		rng, _, _ := strings.Cut(sc.Text(), " ")
		lo, hi, ok := strings.Cut(rng, "-")
		if !ok {
			continue
		}
		a, err1 := strconv.ParseUint(lo, 16, 64)
		b, err2 := strconv.ParseUint(hi, 16, 64)
		if err1 == nil && err2 == nil && uintptr(a) == addr {
			return uintptr(a), uintptr(b)
		}
	}
	tb.Fatalf("no mapping starts at %#x in /proc/self/maps", addr)
	return 0, 0
}

// bigBatch returns n all-orders 8-channel records (about 4 kB each, see
// doc.go's byte budget) starting at *now, 3 s apart.
func bigBatch(s *metrics.Setup, rng *rand.Rand, now *time.Time, n int) []*metrics.Record {
	out := make([]*metrics.Record, n)
	for i := range out {
		r := newRecord(s)
		fillRecord(r, s, rng, *now, true)
		out[i] = r
		*now = now.Add(3 * time.Second)
	}
	return out
}

// fileAheadOfMap grows the store until bbolt's file is longer than its
// memory map: past AllocSize (16 MiB) bbolt grows the file to the high-water
// mark plus AllocSize while the map doubles (bbolt db.go: grow, growSize,
// mmapSize), the state in which a release over the file's size would run
// past the map.
func fileAheadOfMap(t *testing.T, db *DB) (mapStart, mapEnd uintptr) {
	t.Helper()
	s := setup8(allOrders())
	if err := db.SetLayout(s); err != nil {
		t.Fatal(err)
	}
	rng := rand.New(rand.NewPCG(61, 62))
	now := t0
	for range 400 {
		if err := db.PutAggregates(bigBatch(s, rng, &now, 64)); err != nil {
			t.Fatal(err)
		}
		mapStart, mapEnd = mapping(t, db.bdb.Info().Data)
		if fi, err := os.Stat(db.path); err == nil && fi.Size() > int64(mapEnd-mapStart) {
			return mapStart, mapEnd
		}
	}
	t.Fatal("the file never grew past the map; the test needs that state")
	return 0, 0
}

// anonAt maps n bytes of anonymous memory at exactly addr and fills them with
// the sentinel. replace allows mapping over an existing mapping (MAP_FIXED);
// otherwise an occupied address fails (MAP_FIXED_NOREPLACE, mmap(2)).
func anonAt(addr uintptr, n int, replace bool) ([]byte, error) {
	flags := unix.MAP_PRIVATE | unix.MAP_ANONYMOUS | unix.MAP_FIXED_NOREPLACE
	if replace {
		flags = unix.MAP_PRIVATE | unix.MAP_ANONYMOUS | unix.MAP_FIXED
	}
	p, err := unix.MmapPtr(-1, 0, *(*unsafe.Pointer)(unsafe.Pointer(&addr)), uintptr(n), unix.PROT_READ|unix.PROT_WRITE, flags)
	if err != nil {
		return nil, err
	}
	if uintptr(p) != addr {
		return nil, fmt.Errorf("mapped at %#x, asked %#x", uintptr(p), addr)
	}
	b := unsafe.Slice((*byte)(p), n)
	for i := range b {
		b[i] = sentinel
	}
	return b, nil
}

func countCleared(b []byte) int {
	n := 0
	for _, v := range b {
		if v != sentinel {
			n++
		}
	}
	return n
}

// TestReleaseStaysInsideMap places sentinel pages where a release must not
// reach and checks they survive: in the unused tail of bbolt's map beyond the
// committed high-water mark (always possible), and right after the map's end
// when that address is free. It also checks the advised span lies inside the
// mapping the kernel reports.
func TestReleaseStaysInsideMap(t *testing.T) {
	db := openTest(t, Options{})
	mapStart, mapEnd := fileAheadOfMap(t, db)
	db.wmu.Lock()
	defer db.wmu.Unlock()

	p, n := db.releaseSpan()
	if uintptr(p) != mapStart || uintptr(p)+uintptr(n) > mapEnd {
		t.Fatalf("release span [%#x, +%d) leaves the map [%#x, %#x)", uintptr(p), n, mapStart, mapEnd)
	}
	ps := int(db.pageSize)
	tailAt := mapStart + uintptr(n)
	tailLen := min(int(mapEnd-tailAt), 16*ps)
	if tailLen < ps {
		t.Fatalf("no unused tail in the map (span %d, map %d)", n, mapEnd-mapStart)
	}
	tail, err := anonAt(tailAt, tailLen, true)
	if err != nil {
		t.Fatalf("sentinel in the map's tail: %v", err)
	}
	after, err := anonAt(mapEnd, 4*ps, false)
	if err != nil {
		t.Logf("address after the map is occupied (%v); only the tail sentinel applies", err)
	} else {
		defer func() { _ = unix.Munmap(after) }()
	}

	db.releaseMapped()

	if c := countCleared(tail); c != 0 {
		t.Errorf("%d of %d sentinel bytes beyond the high-water mark were cleared", c, len(tail))
	}
	if after != nil {
		if c := countCleared(after); c != 0 {
			t.Errorf("%d of %d sentinel bytes past the map were cleared", c, len(after))
		}
	}
	// Put the file's pages back under the tail so the map is whole again.
	f, err := os.Open(db.path)
	if err != nil {
		t.Fatal(err)
	}
	defer f.Close()
	if _, err := unix.MmapPtr(int(f.Fd()), int64(n), *(*unsafe.Pointer)(unsafe.Pointer(&tailAt)),
		uintptr(tailLen), unix.PROT_READ, unix.MAP_SHARED|unix.MAP_FIXED); err != nil {
		t.Fatalf("restore the map's tail: %v", err)
	}
}

// TestReleasePast32And64MiB grows a store past 32 MiB and 64 MiB (two map
// doublings with the file ahead of the map, bbolt db.go: mmapSize, grow)
// while releasing the map after every commit, and checks that a sentinel
// page over the last page of each map and Go heap sentinels allocated all
// along survive, bbolt's check passes and every record reads back. A release beyond the map zeroes heap pages, which shows
// here as cleared sentinels or as a runtime fatal error.
func TestReleasePast32And64MiB(t *testing.T) {
	const (
		target     = 66 << 20 // bytes of high-water mark to pass: beyond the 64 MiB map
		batchN     = 64
		heapPieces = 512
		pieceBytes = 16 << 10
	)
	if testing.Short() {
		t.Skip("writes about 70 MB")
	}
	db := openTest(t, Options{})
	db.releaseEvery = 0 // release after every commit
	s := setup8(allOrders())
	if err := db.SetLayout(s); err != nil {
		t.Fatal(err)
	}
	rng := rand.New(rand.NewPCG(71, 72))
	now := t0
	var heap [][]byte
	var guard []byte
	var guardMap, guardAt uintptr
	written, releases, guards := 0, 0, 0
	passed32, passed64 := false, false
	for db.Stats().InUseBytes < target {
		if err := db.PutAggregates(bigBatch(s, rng, &now, batchN)); err != nil {
			t.Fatal(err)
		}
		written += batchN
		releases++
		piece := make([]byte, pieceBytes)
		for i := range piece {
			piece[i] = sentinel
		}
		heap = append(heap, piece)
		if len(heap) > heapPieces {
			heap = heap[1:]
		}
		if releases%16 == 0 {
			runtime.GC()
		}
		for i, h := range heap {
			if c := countCleared(h); c != 0 {
				t.Fatalf("after %d records: heap piece %d has %d cleared bytes", written, i, c)
			}
		}
		start, end := mapping(t, db.bdb.Info().Data)
		if guard != nil && start == guardMap && end == guardAt {
			if c := countCleared(guard); c != 0 {
				t.Fatalf("after %d records: %d of %d sentinel bytes in the map's last page were cleared", written, c, len(guard))
			}
		} else {
			// First pass, or bbolt remapped (and so unmapped the old guard):
			// put a guard over the new map's last page. bbolt remaps before
			// its high-water mark comes within one page of the map's end
			// (db.go: allocate), so it never reads that page.
			g, err := anonAt(end-uintptr(db.pageSize), int(db.pageSize), true)
			if err != nil {
				t.Fatalf("guard page: %v", err)
			}
			guard, guardMap, guardAt = g, start, end-uintptr(db.pageSize)
			guards++
			end = guardAt + uintptr(db.pageSize)
		}
		ms := end - start
		passed32 = passed32 || ms > 32<<20
		passed64 = passed64 || ms > 64<<20
	}
	if !passed32 || !passed64 {
		t.Fatalf("map never passed 32 MiB (%v) and 64 MiB (%v)", passed32, passed64)
	}
	checkBolt(t, db)
	n := 0
	if err := db.Query(metrics.Int3s, time.Time{}, time.Time{}, func(*metrics.Record) error { n++; return nil }); err != nil {
		t.Fatal(err)
	}
	if n != written {
		t.Errorf("read back %d records, wrote %d", n, written)
	}
	t.Logf("%d records, %d releases, %d guard pages placed, file %d bytes", written, releases, guards, db.Stats().FileBytes)
}
