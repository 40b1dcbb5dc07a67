package web

import "errors"

// ErrListen reports that the listener could not bind its address.
var ErrListen = errors.New("web: cannot listen")
