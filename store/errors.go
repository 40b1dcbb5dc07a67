package store

import "errors"

// ErrLocked means the store file's lock could not be taken within the
// timeout: another process (or another DB in this one) holds it.
var ErrLocked = errors.New("store: file is locked")

// ErrClosed is returned by methods called after Close.
var ErrClosed = errors.New("store: closed")

// ErrReadOnly is returned by writing methods of a read-only DB.
var ErrReadOnly = errors.New("store: opened read-only")

// ErrNoLayout means no record layout has been stored yet (SetLayout first).
var ErrNoLayout = errors.New("store: no record layout")

// ErrBadLayout means a layout is invalid or a record does not fit its layout.
var ErrBadLayout = errors.New("store: record does not match layout")

// ErrCorrupt means stored bytes could not be decoded.
var ErrCorrupt = errors.New("store: corrupt data")

// ErrBadRecord means a record cannot be stored (nil, bad interval, start before 1970).
var ErrBadRecord = errors.New("store: bad record")

// ErrBadMessage means an outbox message is invalid (empty topic, bad class or QoS).
var ErrBadMessage = errors.New("store: bad message")

// ErrFull means the size cap was reached and trimming could not free enough space.
var ErrFull = errors.New("store: size cap reached")

// ErrDamaged means the store file is damaged (a bad page, a truncated file,
// a failed consistency check): it cannot be used as it is.
var ErrDamaged = errors.New("store: damaged store")
