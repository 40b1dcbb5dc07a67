package input

import (
	"errors"
	"fmt"
)

// ErrHeader is wrapped by every *HeaderError: the file's header (CSV header
// row, WAV chunks before the samples) cannot be used.
var ErrHeader = errors.New("input: bad header")

// ErrData is wrapped by every *DataError: a data row cannot be used.
var ErrData = errors.New("input: bad data")

// ErrTruncated is wrapped, with the line or byte offset, when a recording ends
// part-way through a row or frame (a cut recording). Every frame before it has
// been delivered; callers usually warn once and carry on.
var ErrTruncated = errors.New("input: recording cut short")

// HeaderError reports a header the reader cannot use. For a CSV file Line is
// 1-based and Col, when not 0, is the 1-based column; for a WAV file Line is
// 0 and Offset is the byte offset of the fault. It wraps ErrHeader.
type HeaderError struct {
	File      string
	Line, Col int
	Msg       string
	Offset    int64 // byte offset (WAV, when Line is 0); added to the brief's fields
}

// Error formats e as "FILE:LINE:COL: MSG" (no column when Col is 0) or, for a
// binary file, "FILE: offset N: MSG".
func (e *HeaderError) Error() string {
	return position(e.File, e.Line, e.Col, e.Offset) + e.Msg
}

// Unwrap returns ErrHeader.
func (e *HeaderError) Unwrap() error { return ErrHeader }

// DataError reports a data row the reader cannot use, for example a cell that
// is not a number. Line is 1-based; Col, when not 0, is the 1-based cell
// index. It wraps ErrData.
type DataError struct {
	File      string
	Line, Col int
	Msg       string
}

// Error formats e as "FILE:LINE:COL: MSG" (no column when Col is 0).
func (e *DataError) Error() string {
	return position(e.File, e.Line, e.Col, 0) + e.Msg
}

// Unwrap returns ErrData.
func (e *DataError) Unwrap() error { return ErrData }

// position formats the place of an error, with a trailing ": ".
func position(file string, line, col int, off int64) string {
	if file == "" {
		file = "input"
	}
	switch {
	case line > 0 && col > 0:
		return fmt.Sprintf("%s:%d:%d: ", file, line, col)
	case line > 0:
		return fmt.Sprintf("%s:%d: ", file, line)
	}
	return fmt.Sprintf("%s: offset %d: ", file, off)
}
