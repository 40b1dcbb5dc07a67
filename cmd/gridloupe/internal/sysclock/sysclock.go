package sysclock

// Synced reports whether the kernel considers the clock synchronised. On
// systems where that cannot be asked, it reports true and ok = false.
func Synced() (synced, ok bool) { return synced0() }
