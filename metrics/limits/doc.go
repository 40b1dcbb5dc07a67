// Package limits holds the harmonic limits of IEEE 519-2014 (the edition
// named by Edition) as read-only tables: Table 1 (voltage distortion by bus
// voltage at the PCC) and Table 2 (current distortion for 120 V–69 kV
// systems, rows selected by ISC/IL).
//
// IEEE 519 limits apply at the point of common coupling (PCC). Inside a
// plant or a drive cabinet, values are expected to be higher (diversity and
// cancellation), so there the tables serve as a reference only.
//
// The package holds data and lookups only; it imports only the standard
// library and performs no I/O.
package limits
