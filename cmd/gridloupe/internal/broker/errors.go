package broker

import "errors"

// ErrExposed means a non-loopback address was asked for without TLS and credentials.
var ErrExposed = errors.New("broker: non-loopback address needs TLS and credentials")

// ErrConfig means a Config is invalid otherwise (bad address, TLS without a
// certificate, a username without a password).
var ErrConfig = errors.New("broker: invalid config")
