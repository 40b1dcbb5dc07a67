package gateway

import "errors"

// ErrSourceEnded is returned by Run when a live or simulated source stops
// delivering data: the daemon shuts down cleanly and reports why.
var ErrSourceEnded = errors.New("gateway: source ended")

// ErrConfig reports an unusable Config.
var ErrConfig = errors.New("gateway: invalid configuration")
