package sdnotify

import (
	"net"
	"path/filepath"
	"testing"
	"time"
)

// TestSend receives the datagram on a real unixgram socket, as the service
// manager would (sd_notify(3) protocol: one datagram, KEY=VALUE lines).
func TestSend(t *testing.T) {
	p := filepath.Join(t.TempDir(), "notify.sock")
	l, err := net.ListenUnixgram("unixgram", &net.UnixAddr{Name: p, Net: "unixgram"})
	if err != nil {
		t.Fatal(err)
	}
	defer l.Close()
	n := New(p)
	if err := n.Send("READY=1\nSTATUS=measuring"); err != nil {
		t.Fatal(err)
	}
	buf := make([]byte, 256)
	l.SetReadDeadline(time.Now().Add(5 * time.Second))
	k, err := l.Read(buf)
	if err != nil {
		t.Fatal(err)
	}
	if got := string(buf[:k]); got != "READY=1\nSTATUS=measuring" {
		t.Errorf("got %q", got)
	}
}

func TestDisabled(t *testing.T) {
	t.Setenv("NOTIFY_SOCKET", "")
	if n := FromEnv(); n.Enabled() || n.Send("READY=1") != nil {
		t.Error("a notifier without a socket must be a silent no-op")
	}
}

func TestWatchdogInterval(t *testing.T) {
	t.Setenv("WATCHDOG_USEC", "20000000")
	t.Setenv("WATCHDOG_PID", "")
	if got := WatchdogInterval(); got != 10*time.Second {
		t.Errorf("got %v, want half of WATCHDOG_USEC = 10 s (sd_watchdog_enabled(3) recommendation)", got)
	}
	t.Setenv("WATCHDOG_PID", "1")
	if got := WatchdogInterval(); got != 0 {
		t.Errorf("watchdog for another pid: got %v, want 0", got)
	}
}
