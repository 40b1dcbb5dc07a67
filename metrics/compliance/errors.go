package compliance

import "errors"

// ErrConfig reports an invalid Config: no setup, a nominal or bus voltage
// that is not positive, a negative IL or ISC, a zero start time or a
// coverage threshold outside (0, 1].
var ErrConfig = errors.New("compliance: invalid config")

// ErrShape reports a record whose channels or harmonic orders do not match
// the Config's setup.
var ErrShape = errors.New("compliance: record does not match the setup")

// ErrOrder reports a 3 s record for a day that has already been closed: 3 s
// records must arrive in ascending start order (10 min records may come in
// any order).
var ErrOrder = errors.New("compliance: 3 s record out of order")

// ErrFinished reports an Add after Result.
var ErrFinished = errors.New("compliance: evaluation already finished")
