// Package events detects voltage dips, swells and interruptions the way
// IEC 61000-4-30 describes them, and captures the raw waveform around each.
//
// A [Detector] is fed calibrated samples of every channel, block by block, on
// the pipeline's per-sample path (no allocations). For each voltage channel
// it keeps Urms(1/2): the RMS over one cycle, refreshed every half cycle,
// with the cycle length taken from the tracked frequency (nominal while the
// tracker has no lock, so an interruption is still timed). Thresholds are
// percentages of the declared voltage, with hysteresis; the polyphase rule
// opens an event when the first channel crosses and closes it when the last
// one is back. A bounded ring of raw samples of every channel holds the
// capture, so memory stays constant however many events come.
//
// The package computes; it does no I/O and knows nothing of files, stores or
// networks. It imports only the standard library.
package events
