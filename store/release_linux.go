//go:build linux

package store

import (
	"unsafe"

	bolt "go.etcd.io/bbolt"
	"golang.org/x/sys/unix"
)

// releaseMapped drops this process's page-table entries for the bbolt
// file's memory map (madvise MADV_DONTNEED on a shared, read-only file
// mapping: the data stays in the page cache and on disk, and a later read
// faults it back in). Every commit writes fresh pages that the next
// transaction reads through the map, so without this the resident set grows
// with the file over weeks, although the pages are clean and reclaimable.
//
// It must be called with db.wmu held: all writes, and so all remaps, run
// under it, so the mapping cannot move or shrink meanwhile. Read
// transactions never remap and tolerate the dropped entries.
func (db *DB) releaseMapped() {
	p, n := db.releaseSpan()
	if p == nil || n <= 0 {
		return
	}
	_ = unix.Madvise(unsafe.Slice((*byte)(p), n), unix.MADV_DONTNEED)
}

// releaseSpan returns the start and length of the memory releaseMapped
// advises: the committed high-water mark (meta page id × page size). That
// is never longer than bbolt's map, because bbolt remaps before it moves the
// mark past the map's end (db.go: allocate). The file's size is NOT a bound:
// past bbolt's AllocSize (16 MiB) the file is grown up to AllocSize ahead of
// the map, and MADV_DONTNEED over memory beyond the map zeroes whatever the
// process has there (the Go heap). The caller holds db.wmu.
func (db *DB) releaseSpan() (unsafe.Pointer, int) {
	info := db.bdb.Info()
	if info == nil || info.Data == 0 {
		return nil, 0
	}
	var hwm int64
	if err := db.bdb.View(func(tx *bolt.Tx) error { hwm = tx.Size(); return nil }); err != nil {
		return nil, 0
	}
	n := int(min(hwm&^(db.pageSize-1), maxInt))
	// Info().Data is the address of the mapping as a uintptr; read it as a
	// pointer without arithmetic (the mapping is not Go-managed memory).
	return *(*unsafe.Pointer)(unsafe.Pointer(&info.Data)), n
}
