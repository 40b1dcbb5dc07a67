package modbus

import "errors"

// ErrMap reports a register map that cannot be built (too many channels or
// alarm rules for the address blocks).
var ErrMap = errors.New("modbus: register map does not fit")

// ErrListen reports that the server could not listen on its address.
var ErrListen = errors.New("modbus: cannot listen")
