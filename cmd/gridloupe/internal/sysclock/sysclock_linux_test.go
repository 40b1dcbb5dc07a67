//go:build linux

package sysclock

import "testing"

// TestSyncedFrom reads adjtimex(2)'s return state and status word. The
// numbers are the man page's (src: adjtimex(2), Linux man-pages: TIME_OK 0,
// TIME_INS 1, TIME_ERROR 5; STA_PLL 0x0001, STA_UNSYNC 0x0040), written out
// here rather than taken from x/sys so a wrong constant fails too.
func TestSyncedFrom(t *testing.T) {
	cases := []struct {
		name   string
		state  int
		status int32
		want   bool
	}{
		{"disciplined, TIME_OK", 0, 0x0001, true},
		{"leap second pending, TIME_INS", 1, 0x0001, true},
		{"TIME_ERROR", 5, 0x0001, false},
		{"STA_UNSYNC set", 0, 0x0041, false},
		{"both", 5, 0x0040, false},
	}
	for _, c := range cases {
		if got := syncedFrom(c.state, c.status); got != c.want {
			t.Errorf("%s: syncedFrom(%d, %#04x) = %v, want %v (adjtimex(2))", c.name, c.state, c.status, got, c.want)
		}
	}
}
