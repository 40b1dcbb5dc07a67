// Package sysclock tells whether the system clock is synchronised to an
// external time source, so records can carry clock_unsynced and retention
// can count age only from synchronised time.
package sysclock
