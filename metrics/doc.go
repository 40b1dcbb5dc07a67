// Package metrics owns the electrical quantities gridloupe reports: RMS, DC,
// THD and TDD, harmonic magnitudes and angles, P, Q1 and the IEEE 1459-2010
// apparent-power terms, power factors, three-phase effective quantities,
// symmetrical components and unbalance, and the IEC 61000-4-30 style
// aggregation of window records into 3 s, 10 min and 2 h values.
//
// It works from sums and phasors that the pipeline (package stream)
// accumulates per synchronized window; it reads no files and talks to no
// network. It imports only the standard library.
package metrics
