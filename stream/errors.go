package stream

import "errors"

// ErrConfig reports a pipeline configuration that cannot run (a programmer
// or wiring error: config validation should have caught it first).
var ErrConfig = errors.New("stream: invalid pipeline configuration")

// ErrSource wraps an error returned by a source's ReadFrames.
var ErrSource = errors.New("stream: source failed")
