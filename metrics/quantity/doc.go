// Package quantity is the one table of the scalar per-channel and
// per-phase quantities of a record: for each its key name, unit, how
// intervals aggregate it, which outputs carry it, whether alarm rules may
// watch it and when it applies. The JSON, CSV and table writers, the store
// codec, the Aggregator, the alarm rules, config validation and
// `config --defaults` all read it, so a new quantity is one row here, one
// field with its accessor in metrics/quantities.go and its computation in
// metrics.Compute (DEVELOPERS.md, "A metric").
//
// It imports only the standard library, so config can read it without
// importing metrics. The tables are read-only.
package quantity
