// Package sysclock tells whether the system clock is synchronised to an
// external time source, so records can carry clock_unsynced and retention
// can count age only from synchronised time.
package sysclock

// Synced reports whether the kernel considers the clock synchronised. On
// systems where that cannot be asked, it reports true and ok = false.
func Synced() (synced, ok bool) { return synced0() }
