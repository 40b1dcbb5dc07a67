package mqtt_test

import (
	"crypto/tls"
	"strings"
	"testing"

	paho "github.com/eclipse/paho.mqtt.golang"

	"github.com/gridloupe/gridloupe/store"
	"github.com/gridloupe/gridloupe/stream/mqtt"
	"github.com/gridloupe/gridloupe/stream/mqtt/broker"
	"github.com/gridloupe/gridloupe/stream/mqtt/internal/testcert"
)

// TestEmbeddedTLSCredentials runs publisher and subscriber through the
// embedded broker with TLS, a client certificate and a password.
func TestEmbeddedTLSCredentials(t *testing.T) {
	t.Parallel()
	certs := testcert.New(t)
	b, err := broker.Start(broker.Config{Addr: "127.0.0.1:0", Username: "gateway", Password: testPass, TLS: certs.ServerTLS(t)})
	if err != nil {
		t.Fatalf("broker: %v", err)
	}
	t.Cleanup(func() { _ = b.Close() })
	clientTLS, err := mqtt.TLSConfig(certs.CAFile, certs.ClientCert, certs.ClientKey)
	if err != nil {
		t.Fatalf("TLSConfig: %v", err)
	}
	url := "ssl://" + b.Addr()
	sub := newSubscriber(t, url, func(o *paho.ClientOptions) {
		o.SetTLSConfig(clientTLS.Clone()).SetUsername("gateway").SetPassword(testPass)
	})
	db := openStore(t)
	queued := map[uint64]store.Message{}
	for i := range 4 {
		m := alarmMsg(i)
		queued[queue(t, db, m)[0]] = m
	}
	startPub(t, url, db, func(c *mqtt.Config) { c.TLS, c.Username, c.Password = clientTLS, "gateway", testPass })
	waitUntil(t, "delivery through the embedded broker", func() bool { return pendingCount(t, db) == 0 && len(sub.outboxMsgs(t)) >= 4 })
	checkDelivery(t, sub.outboxMsgs(t), queued)
	if st := sub.statuses(t); len(st) == 0 || st[0].Status != "online" {
		t.Errorf("statuses %+v, want online", st)
	}

	// A wrong password never connects, and never shows up in logs or stats.
	wrong := "x" + testPass
	db2 := openStore(t)
	queue(t, db2, alarmMsg(9))
	r := startPub(t, "ssl://gateway:"+wrong+"@"+b.Addr(), db2, func(c *mqtt.Config) { c.TLS = clientTLS })
	waitUntil(t, "a refused connection", func() bool { return r.Stats().Failures > 0 })
	if s := r.Stats(); s.Connected || strings.Contains(s.LastError, wrong) {
		t.Errorf("stats %+v: want not connected, password masked", s)
	}
	if n := pendingCount(t, db2); n != 1 {
		t.Errorf("%d pending with a refused connection, want 1", n)
	}
}

func TestTLSConfig(t *testing.T) {
	t.Parallel()
	c := testcert.New(t)
	junk := t.TempDir() + "/junk.pem"
	writeFile(t, junk, "not a certificate")
	tests := []struct {
		name, ca, cert, key string
		ok                  bool
		src                 string
	}{
		{"ca and client pair", c.CAFile, c.ClientCert, c.ClientKey, true, "crypto/tls: LoadX509KeyPair"},
		{"ca only", c.CAFile, "", "", true, "README, MQTT topics and payloads: client certificate optional"},
		{"nothing", "", "", "", true, "doc of TLSConfig: system roots"},
		{"junk ca", junk, "", "", false, "crypto/x509: AppendCertsFromPEM finds no certificate"},
		{"missing ca", c.CAFile + ".gone", "", "", false, "os.ReadFile"},
		{"cert without key", c.CAFile, c.ClientCert, "", false, "doc of TLSConfig: both or neither"},
		{"mismatched pair", c.CAFile, c.ClientCert, c.ServerKey, false, "crypto/tls: private key does not match public key"},
	}
	for _, tc := range tests {
		t.Run(tc.name, func(t *testing.T) {
			cfg, err := mqtt.TLSConfig(tc.ca, tc.cert, tc.key)
			if tc.ok != (err == nil) {
				t.Fatalf("TLSConfig: err %v, want ok=%v (%s)", err, tc.ok, tc.src)
			}
			if err != nil {
				return
			}
			if cfg.MinVersion != tls.VersionTLS12 {
				t.Errorf("MinVersion %x, want TLS 1.2", cfg.MinVersion)
			}
			if (tc.ca != "") != (cfg.RootCAs != nil) || (tc.cert != "") != (len(cfg.Certificates) == 1) {
				t.Errorf("roots %v, %d certificates", cfg.RootCAs != nil, len(cfg.Certificates))
			}
		})
	}
}
