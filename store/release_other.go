//go:build !linux

package store

// releaseMapped is a no-op where madvise is not used.
func (db *DB) releaseMapped() {}
