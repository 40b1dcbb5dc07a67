package mqtt_test

import (
	"crypto/tls"
	"strings"
	"testing"
	"time"

	paho "github.com/eclipse/paho.mqtt.golang"

	"github.com/gridloupe/gridloupe/store"
	"github.com/gridloupe/gridloupe/stream/mqtt"
	"github.com/gridloupe/gridloupe/stream/mqtt/broker"
	"github.com/gridloupe/gridloupe/stream/mqtt/internal/testcert"
	"github.com/gridloupe/gridloupe/stream/mqtt/topic"
)

// TestEmbeddedTLSCredentials runs publisher and subscriber through the
// embedded broker with TLS, a client certificate and a password.
func TestEmbeddedTLSCredentials(t *testing.T) {
	t.Parallel()
	certs := testcert.New(t)
	b, err := broker.Start(broker.Config{Addr: "127.0.0.1:0", Username: "bms", Password: testPass, TLS: certs.ServerTLS(t), Prefix: testBase})
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
		o.SetTLSConfig(clientTLS.Clone()).SetUsername("bms").SetPassword(testPass)
	})
	db := openStore(t)
	queued := map[uint64]store.Message{}
	for i := range 4 {
		m := alarmMsg(i)
		queued[queue(t, db, m)[0]] = m
	}
	// the gateway's own path: plain loopback, its own login, no certificate
	if !strings.HasPrefix(b.GatewayURL(), "tcp://127.0.0.1:") {
		t.Errorf("gateway URL %q, want plain TCP on loopback", b.GatewayURL())
	}
	gwUser, gwPass := b.GatewayLogin()
	startPub(t, b.GatewayURL(), db, func(c *mqtt.Config) { c.Username, c.Password = gwUser, gwPass })
	waitUntil(t, "delivery through the embedded broker", func() bool { return pendingCount(t, db) == 0 && len(sub.outboxMsgs(t)) >= 4 })
	checkDelivery(t, sub.outboxMsgs(t), queued)
	if st := sub.statuses(t); len(st) == 0 || st[0].Status != "online" {
		t.Errorf("statuses %+v, want online", st)
	}

	// A wrong password never connects, and never shows up in logs or stats.
	wrong := "x" + testPass
	db2 := openStore(t)
	queue(t, db2, alarmMsg(9))
	r := startPub(t, "ssl://bms:"+wrong+"@"+b.Addr(), db2, func(c *mqtt.Config) { c.TLS = clientTLS })
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

// TestEmbeddedACL: only the gateway's own login publishes under its prefix.
// A client with the configured login subscribes and may publish elsewhere;
// an anonymous loopback client (no login configured) may only subscribe
// (README, MQTT topics and payloads: embedded broker).
func TestEmbeddedACL(t *testing.T) {
	t.Parallel()
	statusTopic := topic.Status(testBase)
	cases := []struct {
		name        string
		user, pass  string // the configured login; "" = none
		client      func(b *broker.Broker) (user, pass string)
		topic       string
		wantArrives bool
	}{
		{"gateway under its prefix", "bms", testPass, func(b *broker.Broker) (string, string) { return b.GatewayLogin() }, statusTopic, true},
		{"login under the prefix", "bms", testPass, func(*broker.Broker) (string, string) { return "bms", testPass }, statusTopic, false},
		{"login elsewhere", "bms", testPass, func(*broker.Broker) (string, string) { return "bms", testPass }, "site/bms/setpoint", true},
		{"anonymous under the prefix", "", "", func(*broker.Broker) (string, string) { return "", "" }, statusTopic, false},
		{"anonymous elsewhere", "", "", func(*broker.Broker) (string, string) { return "", "" }, "site/bms/setpoint", false},
	}
	for _, tc := range cases {
		t.Run(tc.name, func(t *testing.T) {
			t.Parallel()
			b, err := broker.Start(broker.Config{Addr: "127.0.0.1:0", Username: tc.user, Password: tc.pass, Prefix: testBase})
			if err != nil {
				t.Fatal(err)
			}
			t.Cleanup(func() { _ = b.Close() })
			gwUser, gwPass := b.GatewayLogin()
			got := make(chan string, 4)
			watch := paho.NewClient(paho.NewClientOptions().AddBroker(b.GatewayURL()).SetClientID("watch").
				SetUsername(gwUser).SetPassword(gwPass))
			if tok := watch.Connect(); !tok.WaitTimeout(waitLong) || tok.Error() != nil {
				t.Fatalf("watcher: %v", tok.Error())
			}
			defer watch.Disconnect(50)
			if tok := watch.Subscribe("#", 1, func(_ paho.Client, m paho.Message) { got <- m.Topic() }); !tok.WaitTimeout(waitLong) || tok.Error() != nil {
				t.Fatalf("subscribe: %v", tok.Error())
			}
			u, p := tc.client(b)
			c := paho.NewClient(paho.NewClientOptions().AddBroker("tcp://" + b.Addr()).SetClientID("other").
				SetUsername(u).SetPassword(p))
			if tok := c.Connect(); !tok.WaitTimeout(waitLong) || tok.Error() != nil {
				t.Fatalf("connect: %v", tok.Error())
			}
			defer c.Disconnect(50)
			c.Publish(tc.topic, 1, true, `{"status":"online","fake":true}`).WaitTimeout(waitLong)
			select {
			case topic := <-got:
				if !tc.wantArrives {
					t.Errorf("a publish on %s arrived; want it refused", topic)
				}
			case <-time.After(2 * time.Second): // common practice, no source: loopback delivery takes milliseconds
				if tc.wantArrives {
					t.Errorf("the publish on %s never arrived", tc.topic)
				}
			}
		})
	}
}
