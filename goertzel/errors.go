package goertzel

import "errors"

// ErrOrders reports a harmonic order list that is empty, not strictly
// ascending, or holds an order outside 1..MaxOrder.
var ErrOrders = errors.New("goertzel: invalid harmonic orders")

// ErrWindow reports a sliding window length below 1 or above MaxWindow.
var ErrWindow = errors.New("goertzel: invalid window length")

// ErrBins reports a sliding bin list that is empty, or holds a bin k outside
// 1 ≤ k < n/2 (strictly between DC and the Nyquist frequency of the window).
var ErrBins = errors.New("goertzel: invalid bins")
