// Package wavesvg draws a stored voltage-event capture as a self-contained
// SVG (no scripts, no external assets): every voltage channel, the
// Urms(1/2) trace with the threshold and hysteresis lines, and every
// current channel, on one time axis in milliseconds from the event start,
// sized to be read on a phone. It imports the store's Waveform type only.
package wavesvg
