// Package encode prints metrics.Record values in the formats of the
// interface contract: JSON Lines (one object per record, every number the
// shortest round-trip float64), CSV (one header row of flattened key names)
// and a rounded table for people at a terminal, which carries the safety
// caution. AppendJSON is the shared object encoder that the MQTT and
// store-export code reuse.
//
// The package imports only the standard library and metrics; it computes no
// quantities and does no I/O beyond the io.Writer it is given.
package encode
