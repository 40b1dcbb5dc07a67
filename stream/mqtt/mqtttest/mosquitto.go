package mqtttest

import (
	"bytes"
	"fmt"
	"net"
	"os"
	"os/exec"
	"path/filepath"
	"strconv"
	"sync"
	"testing"
	"time"
)

// startTimeout bounds the wait for the port to accept connections; generous
// for a loaded 2-core machine.
const startTimeout = 15 * time.Second

// Broker is a mosquitto process owned by one test.
type Broker struct {
	t    testing.TB
	bin  string
	conf string
	port int

	mu  sync.Mutex
	cmd *exec.Cmd
	out *LockedBuffer
	end chan struct{} // closed when cmd has been waited for
}

// Binary returns the mosquitto executable, or "" when none is installed.
func Binary() string {
	if p, err := exec.LookPath("mosquitto"); err == nil {
		return p
	}
	for _, p := range []string{"/usr/sbin/mosquitto", "/usr/local/sbin/mosquitto"} {
		if fi, err := os.Stat(p); err == nil && !fi.IsDir() {
			return p
		}
	}
	return ""
}

// Start runs mosquitto on a free 127.0.0.1 port and stops it in t.Cleanup.
// Without mosquitto the test is skipped, or fails when CI=true.
func Start(t testing.TB) *Broker {
	t.Helper()
	b := New(t)
	b.Start()
	return b
}

// New prepares mosquitto on a free 127.0.0.1 port without starting it
// (Start does); it is stopped in t.Cleanup. Without mosquitto the test is
// skipped, or fails when CI=true.
func New(t testing.TB) *Broker {
	t.Helper()
	bin := Binary()
	if bin == "" {
		if os.Getenv("CI") == "true" {
			t.Fatal("mosquitto not installed (CI=true makes this a failure): apt-get install mosquitto")
		}
		t.Skip("mosquitto not installed: apt-get install mosquitto")
	}
	port := FreePort(t)
	dir := t.TempDir()
	conf := filepath.Join(dir, "mosquitto.conf")
	text := fmt.Sprintf("listener %d 127.0.0.1\nallow_anonymous true\npersistence false\nlog_dest stderr\nlog_type error\nlog_type warning\nlog_type notice\n", port)
	if err := os.WriteFile(conf, []byte(text), 0o600); err != nil {
		t.Fatalf("mosquitto config: %v", err)
	}
	b := &Broker{t: t, bin: bin, conf: conf, port: port}
	t.Cleanup(b.Stop)
	return b
}

// FreePort returns a TCP port on 127.0.0.1 that was free a moment ago.
func FreePort(t testing.TB) int {
	t.Helper()
	ln, err := net.Listen("tcp", "127.0.0.1:0")
	if err != nil {
		t.Fatalf("free port: %v", err)
	}
	port := ln.Addr().(*net.TCPAddr).Port
	if err := ln.Close(); err != nil {
		t.Fatalf("free port: %v", err)
	}
	return port
}

// Addr returns host:port.
func (b *Broker) Addr() string { return net.JoinHostPort("127.0.0.1", strconv.Itoa(b.port)) }

// URL returns tcp://host:port.
func (b *Broker) URL() string { return "tcp://" + b.Addr() }

// Start runs the broker (again) on its port and waits until it accepts
// connections. It does nothing when the broker is running.
func (b *Broker) Start() {
	b.t.Helper()
	b.mu.Lock()
	defer b.mu.Unlock()
	if b.cmd != nil {
		return
	}
	out := new(LockedBuffer)
	cmd := exec.Command(b.bin, "-c", b.conf)
	cmd.Stdout, cmd.Stderr = out, out
	if err := cmd.Start(); err != nil {
		b.t.Fatalf("start mosquitto: %v", err)
	}
	end := make(chan struct{})
	go func() { _ = cmd.Wait(); close(end) }()
	b.cmd, b.out, b.end = cmd, out, end
	deadline := time.Now().Add(startTimeout)
	for {
		c, err := net.DialTimeout("tcp", b.Addr(), time.Second)
		if err == nil {
			_ = c.Close()
			return
		}
		select {
		case <-end:
			b.cmd = nil
			b.t.Fatalf("mosquitto exited at start: %s", out.String())
		case <-time.After(50 * time.Millisecond):
		}
		if time.Now().After(deadline) {
			b.t.Fatalf("mosquitto did not accept connections on %s within %v: %s", b.Addr(), startTimeout, out.String())
		}
	}
}

// Stop kills the broker abruptly and waits for it to exit. It does nothing
// when the broker is stopped.
func (b *Broker) Stop() {
	b.mu.Lock()
	defer b.mu.Unlock()
	if b.cmd == nil {
		return
	}
	_ = b.cmd.Process.Kill()
	<-b.end
	b.cmd = nil
}

// LockedBuffer is a bytes.Buffer safe for one writer goroutine (a child's
// output copier, a logger) and readers in the test: mosquitto's output, a
// publisher's log.
type LockedBuffer struct {
	mu  sync.Mutex
	buf bytes.Buffer
}

func (s *LockedBuffer) Write(p []byte) (int, error) {
	s.mu.Lock()
	defer s.mu.Unlock()
	return s.buf.Write(p)
}

func (s *LockedBuffer) String() string {
	s.mu.Lock()
	defer s.mu.Unlock()
	return s.buf.String()
}

// WaitUntil polls cond every poll until it holds, or fails the test after
// timeout naming what it waited for.
func WaitUntil(t testing.TB, what string, timeout, poll time.Duration, cond func() bool) {
	t.Helper()
	deadline := time.Now().Add(timeout)
	for !cond() {
		if time.Now().After(deadline) {
			t.Fatalf("timed out after %v waiting for %s", timeout, what)
		}
		time.Sleep(poll)
	}
}
