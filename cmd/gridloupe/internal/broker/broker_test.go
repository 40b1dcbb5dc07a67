package broker_test

import (
	"crypto/tls"
	"crypto/x509"
	"errors"
	"io"
	"net"
	"os"
	"strings"
	"testing"
	"time"

	"github.com/gridloupe/gridloupe/cmd/gridloupe/internal/broker"
	"github.com/gridloupe/gridloupe/stream/mqtt/mqtttest/testcert"
)

// ioTimeout bounds each network exchange; generous for a loaded machine.
const ioTimeout = 10 * time.Second

// connect sends a minimal MQTT 3.1.1 CONNECT (§3.1) with a clean session
// and returns the CONNACK return code (§3.2.2.3).
func connect(t *testing.T, c net.Conn, user, pass string) byte {
	t.Helper()
	str := func(s string) []byte { return append([]byte{byte(len(s) >> 8), byte(len(s))}, s...) }
	flags := byte(0x02) // clean session (§3.1.2.4)
	if user != "" {
		flags |= 0x80 // user name flag (§3.1.2.8)
	}
	if pass != "" {
		flags |= 0x40 // password flag (§3.1.2.9)
	}
	body := append(str("MQTT"), 4, flags, 0, 30) // protocol name, level 4, flags, keep alive 30 s
	body = append(body, str("ah4-bms")...)
	if user != "" {
		body = append(body, str(user)...)
	}
	if pass != "" {
		body = append(body, str(pass)...)
	}
	pkt := append([]byte{0x10, byte(len(body))}, body...) // fixed header; remaining length < 128
	_ = c.SetDeadline(time.Now().Add(ioTimeout))
	if _, err := c.Write(pkt); err != nil {
		t.Fatalf("write CONNECT: %v", err)
	}
	var ack [4]byte
	if _, err := io.ReadFull(c, ack[:]); err != nil {
		t.Fatalf("read CONNACK: %v", err)
	}
	if ack[0] != 0x20 || ack[1] != 2 {
		t.Fatalf("CONNACK header % x, want 20 02 (§3.2.1)", ack[:2])
	}
	return ack[3]
}

// CONNACK return codes, MQTT 3.1.1 §3.2.2.3 Table 3.1.
// A refusal for credentials may be 4 (bad user name or password) or 5 (not
// authorized); the standard leaves the choice to the server (mochi sends 5).
const (
	rcAccepted   = 0
	rcBadUserPwd = 4
	rcNotAuth    = 5
)

func refused(rc byte) bool { return rc == rcBadUserPwd || rc == rcNotAuth }

func TestLoopbackAllowAll(t *testing.T) {
	t.Parallel()
	b, err := broker.Start(broker.Config{Addr: "127.0.0.1:0"})
	if err != nil {
		t.Fatalf("Start: %v", err)
	}
	t.Cleanup(func() { _ = b.Close() })
	host, port, err := net.SplitHostPort(b.Addr())
	if err != nil || host != "127.0.0.1" || port == "0" {
		t.Fatalf("Addr %q: want 127.0.0.1 and the picked port", b.Addr())
	}
	c, err := net.Dial("tcp", b.Addr())
	if err != nil {
		t.Fatalf("dial: %v", err)
	}
	defer c.Close()
	if rc := connect(t, c, "", ""); rc != rcAccepted {
		t.Errorf("anonymous loopback CONNECT: return code %d, want %d (MQTT 3.1.1 §3.2.2.3)", rc, rcAccepted)
	}
	if err := b.Close(); err != nil {
		t.Errorf("Close: %v", err)
	}
	if err := b.Close(); err != nil {
		t.Errorf("second Close: %v", err)
	}
	if c2, err := net.DialTimeout("tcp", b.Addr(), time.Second); err == nil {
		c2.Close()
		t.Errorf("still accepting after Close")
	}
}

func TestCredentials(t *testing.T) {
	t.Parallel()
	certs := testcert.New(t)
	b, err := broker.Start(broker.Config{Addr: "127.0.0.1:0", Username: "bms", Password: "larkfield-ah4", TLS: certs.ServerTLS(t)})
	if err != nil {
		t.Fatalf("Start: %v", err)
	}
	t.Cleanup(func() { _ = b.Close() })
	pem, err := os.ReadFile(certs.CAFile)
	if err != nil {
		t.Fatal(err)
	}
	pool := x509.NewCertPool()
	pool.AppendCertsFromPEM(pem)
	tests := []struct {
		name, user, pass string
		want             byte
		src              string
	}{
		{"right", "bms", "larkfield-ah4", rcAccepted, "MQTT 3.1.1 §3.2.2.3: 0 accepted"},
		{"wrong password", "bms", "larkfield-ah5", rcBadUserPwd, "MQTT 3.1.1 §3.2.2.3: 4 bad user name or password, or 5 not authorized"},
		{"wrong user", "bmx", "larkfield-ah4", rcBadUserPwd, "MQTT 3.1.1 §3.2.2.3"},
		{"none", "", "", rcBadUserPwd, "MQTT 3.1.1 §3.2.2.3; credentials enforced when set (README, MQTT topics and payloads)"},
	}
	for _, tc := range tests {
		t.Run(tc.name, func(t *testing.T) {
			c, err := tls.Dial("tcp", b.Addr(), &tls.Config{RootCAs: pool, MinVersion: tls.VersionTLS12})
			if err != nil {
				t.Fatalf("tls dial: %v", err)
			}
			defer c.Close()
			rc := connect(t, c, tc.user, tc.pass)
			if ok := rc == tc.want || (tc.want != rcAccepted && refused(rc)); !ok {
				t.Errorf("return code %d, want %d (%s)", rc, tc.want, tc.src)
			}
		})
	}
}

func TestRefusals(t *testing.T) {
	t.Parallel()
	certs := testcert.New(t)
	srvTLS := certs.ServerTLS(t)
	tests := []struct {
		name string
		cfg  broker.Config
		want error
		src  string
	}{
		{"all interfaces, nothing", broker.Config{Addr: ":0"}, broker.ErrExposed, "README, MQTT topics and payloads: loopback only unless TLS and credentials"},
		{"wildcard v4, creds only", broker.Config{Addr: "0.0.0.0:0", Username: "u", Password: "p"}, broker.ErrExposed, "README, MQTT topics and payloads: TLS needed too"},
		{"documentation address, TLS only", broker.Config{Addr: "192.0.2.10:1883", TLS: srvTLS}, broker.ErrExposed, "README, MQTT topics and payloads: credentials needed too (RFC 5737 address, never bound)"},
		{"host name", broker.Config{Addr: "gateway.invalid:1883"}, broker.ErrExposed, "our rule: names other than localhost are not trusted as loopback"},
		{"user without password", broker.Config{Addr: "127.0.0.1:0", Username: "u"}, broker.ErrConfig, "common practice, no source"},
		{"TLS without certificate", broker.Config{Addr: "127.0.0.1:0", TLS: &tls.Config{}}, broker.ErrConfig, "crypto/tls: a server needs a certificate"},
		{"no port", broker.Config{Addr: "127.0.0.1"}, broker.ErrConfig, "net.SplitHostPort"},
	}
	for _, tc := range tests {
		t.Run(tc.name, func(t *testing.T) {
			b, err := broker.Start(tc.cfg)
			if err == nil {
				_ = b.Close()
				t.Fatalf("Start succeeded, want %v (%s)", tc.want, tc.src)
			}
			if !errors.Is(err, tc.want) {
				t.Errorf("Start: %v, want %v (%s)", err, tc.want, tc.src)
			}
			if tc.want == broker.ErrExposed && !strings.Contains(err.Error(), "not loopback") {
				t.Errorf("error %q does not say why", err)
			}
		})
	}
}

func TestPortInUse(t *testing.T) {
	t.Parallel()
	ln, err := net.Listen("tcp", "127.0.0.1:0")
	if err != nil {
		t.Fatal(err)
	}
	defer ln.Close()
	if b, err := broker.Start(broker.Config{Addr: ln.Addr().String()}); err == nil {
		_ = b.Close()
		t.Fatalf("Start on a busy port succeeded")
	}
}
