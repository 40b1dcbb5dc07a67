package pcm

import "errors"

// ErrFormat reports a sample format, channel count or frame field the
// reader cannot use.
var ErrFormat = errors.New("pcm: unusable format")
