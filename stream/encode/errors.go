package encode

import "errors"

// ErrShape reports a record whose slices do not match the Setup it is
// printed with (channel, harmonic, phase or sequence counts).
var ErrShape = errors.New("encode: record does not match setup")
