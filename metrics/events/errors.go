package events

import "errors"

// ErrConfig reports a Config that New cannot use.
var ErrConfig = errors.New("events: invalid config")
