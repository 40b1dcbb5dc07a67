package mqtt

import "errors"

// ErrConfig means a Config is invalid; the wrapping error names the field.
var ErrConfig = errors.New("mqtt: invalid config")

// ErrRunning is returned by a second call of Publisher.Run.
var ErrRunning = errors.New("mqtt: publisher already running")

// ErrTLS means TLS files could not be turned into a tls.Config.
var ErrTLS = errors.New("mqtt: bad TLS files")

// ErrAckTimeout means the broker did not acknowledge a message in time.
var ErrAckTimeout = errors.New("mqtt: acknowledgement timed out")

// ErrBadTopic means a queued message's topic cannot be published (empty,
// wildcard, NUL or invalid UTF-8); such a message is dropped from the outbox.
var ErrBadTopic = errors.New("mqtt: topic cannot be published")
