//go:build linux

package store

import (
	"os"
	"unsafe"

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
	fi, err := os.Stat(db.path)
	if err != nil || fi.Size() == 0 {
		return
	}
	info := db.bdb.Info()
	if info == nil || info.Data == 0 {
		return
	}
	// The mapping is at least as long as the file (bbolt maps the file
	// size rounded up); stay within the file's whole pages.
	n := int(fi.Size() &^ (db.pageSize - 1))
	// Info().Data is the address of the mapping as a uintptr; read it as a
	// pointer without arithmetic (the mapping is not Go-managed memory).
	p := *(*unsafe.Pointer)(unsafe.Pointer(&info.Data))
	_ = unix.Madvise(unsafe.Slice((*byte)(p), n), unix.MADV_DONTNEED)
}
