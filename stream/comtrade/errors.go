package comtrade

import (
	"errors"
	"fmt"
)

// ErrConfig is wrapped by every *Error from a .cfg file.
var ErrConfig = errors.New("comtrade: bad .cfg file")

// ErrData is wrapped by every *Error from a .dat file.
var ErrData = errors.New("comtrade: bad .dat file")

// Error is a problem at a place in a COMTRADE file: a 1-based line (and,
// when not 0, a 1-based field) for text, a byte offset for binary data.
type Error struct {
	File        string
	Line, Field int
	Offset      int64 // binary .dat: byte offset of the record; −1 when Line is set
	Msg         string
	err         error // ErrConfig, ErrData or input.ErrTruncated
}

func (e *Error) Error() string {
	switch {
	case e.Line > 0 && e.Field > 0:
		return fmt.Sprintf("%s:%d:%d: %s", e.File, e.Line, e.Field, e.Msg)
	case e.Line > 0:
		return fmt.Sprintf("%s:%d: %s", e.File, e.Line, e.Msg)
	}
	return fmt.Sprintf("%s: offset %d: %s", e.File, e.Offset, e.Msg)
}

// Unwrap returns ErrConfig, ErrData, or input.ErrTruncated when a .dat
// file ends before the sample count the .cfg declares or inside a binary
// record (the samples before it have been delivered).
func (e *Error) Unwrap() error { return e.err }
