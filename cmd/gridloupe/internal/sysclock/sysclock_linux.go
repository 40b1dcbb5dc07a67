//go:build linux

package sysclock

import "golang.org/x/sys/unix"

// synced0 asks adjtimex(2): the kernel clears STA_UNSYNC once an NTP or
// PTP daemon disciplines the clock, and returns TIME_ERROR while it is
// unsynchronised.
func synced0() (bool, bool) {
	var tx unix.Timex // Modes 0: read only
	state, err := unix.Adjtimex(&tx)
	if err != nil {
		return true, false
	}
	return state != unix.TIME_ERROR && tx.Status&unix.STA_UNSYNC == 0, true
}
