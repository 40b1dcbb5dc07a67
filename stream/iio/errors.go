package iio

import "errors"

// ErrDevice reports a device, attribute or channel that cannot be used:
// not found, a missing or malformed attribute, a rate that does not stick.
var ErrDevice = errors.New("iio: unusable device")

// ErrVanished reports a device that disappeared while it was being read.
var ErrVanished = errors.New("iio: device vanished")
