package metrics

import "errors"

// ErrNoChannels reports a Setup without any channel.
var ErrNoChannels = errors.New("metrics: no channels")

// ErrChannel reports a channel whose kind, phase or scale is not allowed.
var ErrChannel = errors.New("metrics: invalid channel")

// ErrDuplicate reports two channels of the same kind on the same phase.
var ErrDuplicate = errors.New("metrics: duplicate channel for phase")

// ErrOrders reports harmonic orders that are not ascending from 1 within 1..MaxOrder.
var ErrOrders = errors.New("metrics: invalid harmonic orders")

// ErrReference reports an angle reference that is not a voltage channel.
var ErrReference = errors.New("metrics: invalid reference channel")

// ErrWiring reports an unknown wiring.
var ErrWiring = errors.New("metrics: invalid wiring")

// ErrNominal reports a negative or non-finite nominal value.
var ErrNominal = errors.New("metrics: invalid nominal value")
