// Package compliance evaluates one week of stored 3 s and 10 min
// aggregates against the harmonic limits of IEEE 519-2014 (the edition
// named by limits.Edition) with the statistics of its clause 5: daily 99th
// percentiles of the 3 s values and weekly 95th and 99th percentiles of the
// 10 min values, each compared with a multiple of the Table 1 (voltage) or
// Table 2 (current) limit.
//
// IEEE 519 limits apply at the point of common coupling (PCC); values
// measured inside a plant or a drive cabinet are a reference only.
//
// The package is pure: it does no I/O and keeps its memory bounded (the
// upper tail of each quantity's values, not the values themselves). It
// imports the standard library, metrics and metrics/limits; not store or
// config.
package compliance
