package sim

import "errors"

// ErrConfig reports a simulator Config that New rejects; the wrapping error
// names the field and the value.
var ErrConfig = errors.New("sim: invalid config")
