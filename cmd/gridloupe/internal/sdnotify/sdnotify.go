package sdnotify

import (
	"fmt"
	"net"
	"os"
	"strconv"
	"time"
)

// Notifier sends notifications. The zero value (no socket) does nothing.
// It is safe for concurrent use.
type Notifier struct {
	addr string
}

// FromEnv returns a Notifier for $NOTIFY_SOCKET ("" = disabled). An
// abstract socket is written with a leading '@'.
func FromEnv() Notifier { return Notifier{addr: os.Getenv("NOTIFY_SOCKET")} }

// New returns a Notifier for the given socket path.
func New(addr string) Notifier { return Notifier{addr: addr} }

// Enabled reports whether a socket is configured.
func (n Notifier) Enabled() bool { return n.addr != "" }

// Send sends one notification message such as "READY=1".
func (n Notifier) Send(state string) error {
	if n.addr == "" {
		return nil
	}
	name := n.addr
	if name[0] == '@' {
		name = "\x00" + name[1:]
	}
	c, err := net.DialUnix("unixgram", nil, &net.UnixAddr{Name: name, Net: "unixgram"})
	if err != nil {
		return fmt.Errorf("sdnotify: %w", err)
	}
	defer c.Close()
	if _, err := c.Write([]byte(state)); err != nil {
		return fmt.Errorf("sdnotify: %w", err)
	}
	return nil
}

// WatchdogInterval returns half of $WATCHDOG_USEC (the interval at which to
// send WATCHDOG=1, as the service manager recommends), or 0 when no
// watchdog is configured for this process.
func WatchdogInterval() time.Duration {
	us, err := strconv.ParseInt(os.Getenv("WATCHDOG_USEC"), 10, 64)
	if err != nil || us <= 0 {
		return 0
	}
	if pid := os.Getenv("WATCHDOG_PID"); pid != "" && pid != strconv.Itoa(os.Getpid()) {
		return 0
	}
	return time.Duration(us) * time.Microsecond / 2
}
