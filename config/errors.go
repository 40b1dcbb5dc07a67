package config

import (
	"errors"
	"strconv"
	"strings"
)

// ErrInvalid is wrapped by every error about a config file's content: YAML
// syntax, unknown keys, wrong types and impossible values (exit code class 2).
var ErrInvalid = errors.New("config: invalid")

// ErrRead is wrapped by errors reading a config file, or a password file or
// variable the config names (exit code class 1).
var ErrRead = errors.New("config: cannot read")

// Error is a problem with a config file's content, located in the file.
// Line and Col are 1-based; 0 means unknown. Key is the key path, such as
// "nominal.frequency_hz" or "channels[2].kind" (list indices count from 0);
// empty for problems of the whole document. An Error is not changed after
// it is returned, so it is safe for concurrent reads.
type Error struct {
	File      string
	Line, Col int
	Key, Msg  string
}

// Error returns "FILE:LINE:COL: KEY: MSG", leaving out the parts that are
// unknown or empty.
func (e *Error) Error() string {
	var b strings.Builder
	b.WriteString(e.File)
	if e.Line > 0 {
		b.WriteByte(':')
		b.WriteString(strconv.Itoa(e.Line))
		if e.Col > 0 {
			b.WriteByte(':')
			b.WriteString(strconv.Itoa(e.Col))
		}
	}
	if e.Key != "" {
		b.WriteString(": ")
		b.WriteString(e.Key)
	}
	b.WriteString(": ")
	b.WriteString(e.Msg)
	return b.String()
}

// Unwrap returns ErrInvalid, so errors.Is(err, ErrInvalid) holds.
func (e *Error) Unwrap() error { return ErrInvalid }
