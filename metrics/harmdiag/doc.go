// Package harmdiag draws diagnostics from stored aggregates: the direction
// of each current harmonic's active power (does the cabinet inject that
// order into the supply or absorb it from there), and a reactor/filter
// ageing indicator: TDD at comparable load, binned by the fundamental
// current, week after week.
//
// It reads metrics.Records and holds no I/O.
package harmdiag
