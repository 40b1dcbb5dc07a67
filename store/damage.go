package store

import (
	"errors"
	"fmt"
	"runtime/debug"

	bolt "go.etcd.io/bbolt"
	berrors "go.etcd.io/bbolt/errors"
)

// guarded runs fn with memory faults turned into panics
// (debug.SetPanicOnFault: a SIGBUS from a truncated file or a SIGSEGV from
// a wild page reference) and recovers any panic, bbolt's assertions
// included, as ErrDamaged naming path. bbolt's View and Update roll their
// transaction back on a panic, so the DB can still be closed.
func guarded(path string, fn func() error) (err error) {
	old := debug.SetPanicOnFault(true)
	defer func() {
		debug.SetPanicOnFault(old)
		if r := recover(); r != nil {
			err = damaged(path, fmt.Errorf("%v", r))
		}
	}()
	return fn()
}

func damaged(path string, cause error) error {
	return fmt.Errorf("%w: %s: %w", ErrDamaged, path, cause)
}

// update runs fn in a guarded write transaction.
func (db *DB) update(fn func(tx *bolt.Tx) error) error {
	return guarded(db.path, func() error { return db.bdb.Update(fn) })
}

// isDamageErr reports whether an error from bolt.Open means the file's
// content is bad (rather than locked, missing or not permitted).
func isDamageErr(err error) bool {
	return errors.Is(err, berrors.ErrInvalid) || errors.Is(err, berrors.ErrChecksum) ||
		errors.Is(err, berrors.ErrVersionMismatch) || errors.Is(err, berrors.ErrInvalidMapping)
}

// openGuarded opens the bbolt file with faults and panics recovered.
func openGuarded(path string, bo *bolt.Options) (*bolt.DB, error) {
	var bdb *bolt.DB
	err := guarded(path, func() error {
		var err error
		bdb, err = bolt.Open(path, 0o600, bo)
		return err
	})
	switch {
	case err == nil:
		return bdb, nil
	case errors.Is(err, ErrDamaged):
		return nil, err
	case isDamageErr(err):
		return nil, damaged(path, err)
	}
	return nil, err
}

// verify checks the file behind bdb (a read-only open, whose meta page
// bbolt has validated) with fsck, reading pages without the map, then runs
// bbolt's own check. fsck comes first and is at least as strict as bbolt's
// free-page scan, because that scan runs on a goroutine of its own (at
// every writable open, and inside the check of a read-only one) where any
// problem ends the process. bdb is closed when verify fails.
func verify(bdb *bolt.DB, path string) error {
	ps := bdb.Info().PageSize
	var hwm, root uint64
	err := guarded(path, func() error {
		return bdb.View(func(tx *bolt.Tx) error {
			hwm, root = uint64(tx.Size())/uint64(ps), uint64(tx.Cursor().Bucket().Root())
			return nil
		})
	})
	if err == nil {
		if ferr := fsckFile(path, ps, hwm, root); ferr != nil {
			err = damaged(path, ferr)
		}
	}
	if err == nil {
		var errs []error
		err = guarded(path, func() error {
			return bdb.View(func(tx *bolt.Tx) error {
				for e := range tx.Check() {
					if len(errs) < 8 {
						errs = append(errs, e)
					}
				}
				return nil
			})
		})
		if err == nil && len(errs) > 0 {
			err = damaged(path, errors.Join(errs...))
		}
	}
	if err != nil {
		return errors.Join(err, bdb.Close())
	}
	return nil
}
