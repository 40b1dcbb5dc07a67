//go:build race

package goertzel

// raceEnabled shortens the long sliding-DFT run under the race detector,
// which slows the per-sample loop about tenfold.
const raceEnabled = true
