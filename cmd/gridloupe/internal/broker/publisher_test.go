package broker_test

// Tests of the embedded broker with gridloupe's own MQTT publisher on the
// other end: the path the daemon takes with "broker: embedded".

import (
	"bytes"
	"context"
	"encoding/json"
	"log/slog"
	"path/filepath"
	"strconv"
	"strings"
	"sync"
	"testing"
	"time"

	paho "github.com/eclipse/paho.mqtt.golang"

	"github.com/gridloupe/gridloupe/cmd/gridloupe/internal/broker"
	"github.com/gridloupe/gridloupe/cmd/gridloupe/internal/outbox"
	"github.com/gridloupe/gridloupe/store"
	"github.com/gridloupe/gridloupe/stream/mqtt"
	"github.com/gridloupe/gridloupe/stream/mqtt/mqtttest"
	"github.com/gridloupe/gridloupe/stream/mqtt/mqtttest/testcert"
	"github.com/gridloupe/gridloupe/stream/mqtt/topic"
)

// Timing for tests on a loaded 2-core machine.
const (
	waitLong  = 45 * time.Second      // upper bound for any delivery; tests poll and finish as soon as it happens
	pollEvery = 20 * time.Millisecond // polling step while waiting
)

const (
	testBase = "gridloupe/north-weir-dc2/dc2-gw1" // invented demo site (DESIGN.md)
	testPass = "weir-pump-7Q"                     // must never show up in logs
)

// openStore opens a real bbolt store in t.TempDir().
func openStore(t testing.TB) *store.DB {
	t.Helper()
	db, err := store.Open(store.Options{Path: filepath.Join(t.TempDir(), "gridloupe.db"), NoSync: true})
	if err != nil {
		t.Fatalf("store: %v", err)
	}
	t.Cleanup(func() { _ = db.Close() })
	return db
}

func pending(t testing.TB, db *store.DB) int {
	t.Helper()
	m, err := db.Pending(0, 1<<20)
	if err != nil {
		t.Fatalf("Pending: %v", err)
	}
	return len(m)
}

func waitUntil(t testing.TB, what string, cond func() bool) {
	t.Helper()
	deadline := time.Now().Add(waitLong)
	for !cond() {
		if time.Now().After(deadline) {
			t.Fatalf("timed out after %v waiting for %s", waitLong, what)
		}
		time.Sleep(pollEvery)
	}
}

// runPub runs a publisher over db until the test ends and checks that the
// password never reached its log.
func runPub(t *testing.T, cfg mqtt.Config) *mqtt.Publisher {
	t.Helper()
	logs := new(mqtttest.LockedBuffer)
	cfg.ClientID = "dc2-gw1-" + strconv.FormatInt(time.Now().UnixNano(), 36)
	cfg.Base = testBase
	cfg.Poll, cfg.RetryInterval, cfg.MaxReconnect = 100*time.Millisecond, 200*time.Millisecond, time.Second
	cfg.Logger = slog.New(slog.NewTextHandler(logs, &slog.HandlerOptions{Level: slog.LevelDebug}))
	p, err := mqtt.New(cfg)
	if err != nil {
		t.Fatalf("New: %v", err)
	}
	ctx, cancel := context.WithCancel(context.Background())
	done := make(chan error, 1)
	go func() { done <- p.Run(ctx) }()
	t.Cleanup(func() {
		cancel()
		select {
		case err := <-done:
			if err != nil {
				t.Errorf("Run: %v", err)
			}
		case <-time.After(waitLong):
			t.Errorf("Run did not return within %v of cancel", waitLong)
		}
		if s := logs.String(); strings.Contains(s, testPass) {
			t.Errorf("password in the publisher's log:\n%s", s)
		}
	})
	return p
}

// TestPublisherTLSCredentials runs publisher and subscriber through the
// embedded broker with TLS, a client certificate and a password.
func TestPublisherTLSCredentials(t *testing.T) {
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

	var mu sync.Mutex
	got := map[string][]byte{} // topic+seq -> payload, and the status
	subbed := make(chan struct{}, 1)
	o := paho.NewClientOptions().AddBroker("ssl://" + b.Addr()).SetClientID("bms-sub").
		SetTLSConfig(clientTLS.Clone()).SetUsername("bms").SetPassword(testPass).SetCleanSession(true)
	o.SetOnConnectHandler(func(c paho.Client) {
		if tok := c.Subscribe(testBase+"/#", 1, func(_ paho.Client, m paho.Message) {
			mu.Lock()
			got[m.Topic()+" "+string(m.Payload())] = bytes.Clone(m.Payload())
			mu.Unlock()
		}); tok.WaitTimeout(waitLong) && tok.Error() == nil {
			subbed <- struct{}{}
		}
	})
	sub := paho.NewClient(o)
	if tok := sub.Connect(); !tok.WaitTimeout(waitLong) || tok.Error() != nil {
		t.Fatalf("subscriber over TLS with a client certificate and login: %v", tok.Error())
	}
	t.Cleanup(func() { sub.Disconnect(100) })
	<-subbed

	db := openStore(t)
	var want []string
	for i := range 4 {
		body := `{"name":"current-distortion","state":"raised","channel":"ia","value":8.2` + strconv.Itoa(i) + `}`
		seqs, err := db.Enqueue(store.Message{Class: store.ClassAlarm, Topic: topic.Alarm(testBase), QoS: 1, Payload: []byte(body)})
		if err != nil {
			t.Fatal(err)
		}
		// README, MQTT topics and payloads: seq is the first key of every queued payload
		want = append(want, topic.Alarm(testBase)+` {"seq":`+strconv.FormatUint(seqs[0], 10)+","+body[1:])
	}
	// the gateway's own path: plain loopback, its own login, no certificate
	if !strings.HasPrefix(b.GatewayURL(), "tcp://127.0.0.1:") {
		t.Errorf("gateway URL %q, want plain TCP on loopback", b.GatewayURL())
	}
	gwUser, gwPass := b.GatewayLogin()
	runPub(t, mqtt.Config{Broker: b.GatewayURL(), Outbox: outbox.Store{DB: db}, Username: gwUser, Password: gwPass})
	waitUntil(t, "delivery through the embedded broker", func() bool {
		mu.Lock()
		defer mu.Unlock()
		for _, w := range want {
			if _, ok := got[w]; !ok {
				return false
			}
		}
		return pending(t, db) == 0
	})
	mu.Lock()
	online := false
	for k, p := range got {
		var st struct{ Status string }
		if strings.HasPrefix(k, topic.Status(testBase)+" ") && json.Unmarshal(p, &st) == nil && st.Status == "online" {
			online = true
		}
	}
	mu.Unlock()
	if !online {
		t.Errorf("no online status on %s", topic.Status(testBase))
	}

	// A wrong password never connects, and never shows up in logs or stats.
	wrong := "x" + testPass
	db2 := openStore(t)
	if _, err := db2.Enqueue(store.Message{Class: store.ClassAlarm, Topic: topic.Alarm(testBase), QoS: 1, Payload: []byte(`{"name":"x"}`)}); err != nil {
		t.Fatal(err)
	}
	r := runPub(t, mqtt.Config{Broker: "ssl://bms:" + wrong + "@" + b.Addr(), Outbox: outbox.Store{DB: db2}, TLS: clientTLS})
	waitUntil(t, "a refused connection", func() bool { return r.Stats().Failures > 0 })
	if s := r.Stats(); s.Connected || strings.Contains(s.LastError, wrong) {
		t.Errorf("stats %+v: want not connected, password masked", s)
	}
	if n := pending(t, db2); n != 1 {
		t.Errorf("%d pending with a refused connection, want 1", n)
	}
}
