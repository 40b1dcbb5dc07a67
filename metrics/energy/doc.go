// Package energy integrates active and fundamental reactive energy per
// circuit, window by window, and computes demand: the average of the
// phase currents and of the total active power over a fixed (clock
// aligned) or sliding interval, with each month's maximum, and IL, the
// maximum demand load current of IEEE 519, estimated from those monthly
// maxima.
//
// It holds no I/O: the caller restores and persists the counters.
package energy
