// Package input reads recorded waveforms, CSV and WAV files, as frames: one
// raw sample of every channel, interleaved, delivered in blocks with
// io.Reader's rules. Calibration (raw·scale + offset) is the caller's.
//
// The package owns file formats only: it imports the standard library alone
// and knows nothing of metrics, configuration or the pipeline.
package input
