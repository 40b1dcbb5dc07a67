// Package calib turns readings a technician took from a reference
// instrument into channel corrections: a scale factor for each channel
// whose RMS reading is given, and a delay (the config's delay_us) for the
// current channels whose power factor is given, so that a few seconds of
// measurement, recomputed with the corrections, read what the reference
// read.
//
// The package holds the arithmetic only; it performs no I/O.
package calib
