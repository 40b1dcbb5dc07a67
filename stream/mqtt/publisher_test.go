package mqtt_test

import (
	"context"
	"errors"
	"strings"
	"testing"
	"time"

	"github.com/gridloupe/gridloupe/store"
	"github.com/gridloupe/gridloupe/stream/mqtt"
	"github.com/gridloupe/gridloupe/stream/mqtt/mqtttest"
	"github.com/gridloupe/gridloupe/stream/mqtt/topic"
)

// shutdownBound is how soon Run must return after cancel: the README's "exits within a few seconds"
// (offline status wait 1 s + disconnect quiesce 0.25 s inside it).
const shutdownBound = 2 * time.Second

// statusTimeLayout is the status "time" format: RFC 3339 UTC with
// microseconds (DESIGN.md, Time).
const statusTimeLayout = "2006-01-02T15:04:05.000000Z"

func TestDeliverInOrder(t *testing.T) {
	t.Parallel()
	b := mqtttest.Start(t)
	db := openStore(t)
	sub := newSubscriber(t, b.URL(), nil)
	queued := map[uint64]store.Message{}
	var msgs []store.Message
	for i := range 6 {
		msgs = append(msgs, telemetryMsg(i))
		if i%2 == 1 {
			msgs = append(msgs, alarmMsg(i))
		}
	}
	msgs[0].QoS = 0 // telemetry may go at QoS 0; it must still arrive on a healthy link
	for i, s := range queue(t, db, msgs...) {
		queued[s] = msgs[i]
	}
	r := startPub(t, b.URL(), db, func(c *mqtt.Config) { c.InFlight = 4; c.Password = testPass; c.Username = "" })
	waitUntil(t, "all queued messages", func() bool { return len(sub.outboxMsgs(t)) >= len(queued) })

	// Messages queued while running go out after Kick.
	more := []store.Message{alarmMsg(20), telemetryMsg(21)}
	for i, s := range queue(t, db, more...) {
		queued[s] = more[i]
	}
	r.Kick()
	waitUntil(t, "messages queued while running", func() bool { return len(sub.outboxMsgs(t)) >= len(queued) })
	checkDelivery(t, sub.outboxMsgs(t), queued)
	waitUntil(t, "outbox drained", func() bool { return pendingCount(t, db) == 0 })

	st := sub.statuses(t)
	if len(st) == 0 || st[0].Status != "online" {
		t.Fatalf("statuses %+v: want online first (DESIGN.md: online is published on every connect)", st)
	}
	if _, err := time.Parse(statusTimeLayout, st[0].Time); err != nil {
		t.Errorf("online time %q: %v (DESIGN.md: RFC 3339 UTC with microseconds)", st[0].Time, err)
	}
	if st[0].Site != "north-weir-dc2" || st[0].Gateway != "dc2-gw1" {
		t.Errorf("online status site %q gateway %q, want the base's last two levels", st[0].Site, st[0].Gateway)
	}
	// A subscriber arriving later gets the online status as a retained message.
	late := newSubscriber(t, b.URL(), nil)
	waitUntil(t, "retained online for a late subscriber", func() bool { return late.lastStatus(t).Status == "online" })
	if !late.lastStatus(t).retained {
		t.Errorf("online status not retained (MQTT 3.1.1 §3.3.1.3: retained messages reach new subscribers with RETAIN set)")
	}
	s := r.Stats()
	if !s.Connected || !r.Connected() || s.Acked != uint64(len(queued)) || s.Published < uint64(len(queued)) {
		t.Errorf("stats %+v: want connected, %d acked", s, len(queued))
	}
}

// TestBrokerRestartNoLoss stops the broker while alarms are being queued and
// starts it again on the same port: every alarm arrives, in seq order.
func TestBrokerRestartNoLoss(t *testing.T) {
	skipPahoResumeRace(t)
	t.Parallel()
	outage := 30 * time.Second
	if testing.Short() {
		outage = 3 * time.Second
	}
	b := mqtttest.Start(t)
	db := openStore(t)
	sub := newSubscriber(t, b.URL(), nil)
	// The publisher reaches the broker through a proxy that stays closed
	// after the restart until the subscriber has subscribed again (its
	// session is clean, so it would miss what arrives before that).
	px := newProxy(t, b.Addr(), mqtttest.FreePort(t))
	px.Open(t)
	r := startPub(t, px.URL(), db, nil)

	queued := map[uint64]store.Message{}
	add := func(m store.Message) {
		for _, s := range queue(t, db, m) {
			queued[s] = m
		}
		r.Kick()
	}
	for i := range 5 {
		add(alarmMsg(i))
	}
	waitUntil(t, "alarms before the outage", func() bool { return len(sub.outboxMsgs(t)) >= 5 })

	subbed := sub.subbed.Load()
	b.Stop()
	px.Cut()
	const step = 200 * time.Millisecond
	sawDown := false
	for i := range int(outage / step) {
		add(alarmMsg(100 + i))
		if i%4 == 0 {
			add(telemetryMsg(100 + i))
		}
		sawDown = sawDown || !r.Connected()
		time.Sleep(step) // pacing of the producer, not a correctness wait
	}
	if !sawDown {
		t.Errorf("Connected() stayed true while the broker was down")
	}
	if n := pendingCount(t, db); n < int(outage/step) {
		t.Errorf("%d messages pending after the outage, want at least %d queued while down", n, int(outage/step))
	}
	b.Start()
	waitUntil(t, "subscriber back", func() bool { return sub.subbed.Load() > subbed })
	px.Open(t)
	add(alarmMsg(999))
	waitUntil(t, "every alarm after the restart", func() bool { return pendingCount(t, db) == 0 && len(distinct(sub.outboxMsgs(t))) >= len(queued) })
	checkDelivery(t, sub.outboxMsgs(t), queued)
	if s := r.Stats(); s.Reconnects < 1 {
		t.Errorf("stats %+v: want a reconnect", s)
	}
	online := 0
	for _, st := range sub.statuses(t) {
		if st.Status == "online" {
			online++
		}
	}
	if online < 2 {
		t.Errorf("%d online statuses, want one per connection (2)", online)
	}
}

func distinct(ms []seqMsg) map[uint64]bool {
	out := map[uint64]bool{}
	for _, m := range ms {
		out[m.seq] = true
	}
	return out
}

// TestLastWill cuts the publisher's connection abruptly: the broker must
// publish the retained offline Last Will.
func TestLastWill(t *testing.T) {
	t.Parallel()
	b := mqtttest.Start(t)
	db := openStore(t)
	sub := newSubscriber(t, b.URL(), nil)
	px := newProxy(t, b.Addr(), mqtttest.FreePort(t))
	px.Open(t)
	startPub(t, px.URL(), db, nil)
	waitUntil(t, "online", func() bool { return sub.lastStatus(t).Status == "online" })
	px.Cut()
	waitUntil(t, "offline will", func() bool { return sub.lastStatus(t).Status == "offline" })
	st := sub.lastStatus(t)
	if st.Reason != "connection_lost" || st.Time != "" || st.Gateway != "dc2-gw1" {
		t.Errorf("will %+v: want reason connection_lost, no time (doc.go: the will is fixed at connect)", st)
	}
	late := newSubscriber(t, b.URL(), nil)
	waitUntil(t, "retained will", func() bool { return late.lastStatus(t).Status == "offline" })
	if !late.lastStatus(t).retained {
		t.Errorf("will not retained (MQTT 3.1.1 §3.1.2.7: Will Retain)")
	}
}

func TestCleanShutdown(t *testing.T) {
	t.Parallel()
	b := mqtttest.Start(t)
	db := openStore(t)
	sub := newSubscriber(t, b.URL(), nil)
	r := startPub(t, b.URL(), db, nil)
	waitUntil(t, "online", func() bool { return sub.lastStatus(t).Status == "online" })
	if took := r.stop(t); took > shutdownBound {
		t.Errorf("Run returned %v after cancel, want within %v", took, shutdownBound)
	}
	waitUntil(t, "offline", func() bool { return sub.lastStatus(t).Status == "offline" })
	st := sub.lastStatus(t)
	if st.Reason != "shutdown" {
		t.Errorf("offline %+v: want reason shutdown", st)
	}
	if _, err := time.Parse(statusTimeLayout, st.Time); err != nil {
		t.Errorf("offline time %q: %v", st.Time, err)
	}
	if r.Connected() {
		t.Errorf("Connected() after Run returned")
	}
	late := newSubscriber(t, b.URL(), nil)
	waitUntil(t, "retained offline", func() bool { return late.lastStatus(t).Status == "offline" })
	if s := late.lastStatus(t); !s.retained || s.Reason != "shutdown" {
		t.Errorf("late subscriber got %+v, want the retained shutdown status", s)
	}
}

// TestUnreachableAtStart starts the publisher before any broker listens on
// its port; a broker started there later gets the whole outbox.
func TestUnreachableAtStart(t *testing.T) {
	t.Parallel()
	b := mqtttest.New(t) // port chosen, nothing listening yet
	db := openStore(t)
	n := 0
	for i := range 4 {
		queue(t, db, alarmMsg(i))
		n++
	}
	r := startPub(t, b.URL(), db, nil)
	waitUntil(t, "a failed connection attempt", func() bool { return r.Stats().Failures > 0 })
	if r.Connected() {
		t.Fatalf("Connected() with no broker")
	}
	if s := r.Stats(); s.LastError == "" {
		t.Errorf("stats %+v: want the connection error", s)
	}
	queue(t, db, telemetryMsg(9))
	n++
	b.Start()
	waitUntil(t, "outbox drained", func() bool { return pendingCount(t, db) == 0 })
	if s := r.Stats(); !s.Connected || s.Acked != uint64(n) {
		t.Errorf("stats %+v: want connected and %d acked", s, n)
	}
	sub := newSubscriber(t, b.URL(), nil)
	waitUntil(t, "retained online", func() bool { return sub.lastStatus(t).Status == "online" })
	if strings.Count(r.logs.String(), "mqtt broker unreachable") != 1 {
		t.Errorf("want the unreachable state logged once:\n%s", r.logs)
	}
}

// TestAckFailureRetried makes the store's Ack fail: delivered messages are
// not sent again, and their Ack is retried until it succeeds.
func TestAckFailureRetried(t *testing.T) {
	t.Parallel()
	b := mqtttest.Start(t)
	db := openStore(t)
	ob := &errOutbox{testDB: db}
	ob.fail.Store(true)
	sub := newSubscriber(t, b.URL(), nil)
	queued := map[uint64]store.Message{}
	for i := range 3 {
		m := alarmMsg(i)
		queued[queue(t, db, m)[0]] = m
	}
	r := startPub(t, b.URL(), ob, nil)
	waitUntil(t, "delivery", func() bool { return len(sub.outboxMsgs(t)) >= 3 })
	waitUntil(t, "an ack failure", func() bool { return r.Stats().Failures > 0 })
	if n := pendingCount(t, db); n != 3 {
		t.Fatalf("%d pending while Ack fails, want 3", n)
	}
	ob.fail.Store(false)
	waitUntil(t, "acks retried", func() bool { return pendingCount(t, db) == 0 })
	got := sub.outboxMsgs(t)
	checkDelivery(t, got, queued)
	if len(got) != 3 {
		t.Errorf("%d messages received, want 3: a failed Ack must not cause a resend while running", len(got))
	}
	if !errors.Is(errInjected, errInjected) || !strings.Contains(r.Stats().LastError, errInjected.Error()) {
		t.Errorf("LastError %q, want the ack failure", r.Stats().LastError)
	}
}

// TestBadTopicAndRawPayload drops a message whose topic has a wildcard
// (MQTT 3.1.1 §4.7.1: wildcards must not be used in a PUBLISH topic) and
// passes a non-object payload through unchanged.
func TestBadTopicAndRawPayload(t *testing.T) {
	t.Parallel()
	b := mqtttest.Start(t)
	db := openStore(t)
	sub := newSubscriber(t, b.URL(), nil)
	good := alarmMsg(1)
	bad := alarmMsg(2)
	bad.Topic = testBase + "/alarm/+"
	raw := store.Message{Class: store.ClassEvent, Topic: topic.Event(testBase), Payload: []byte("[1,2,3]"), QoS: 1}
	seqs := queue(t, db, good, bad, raw)
	r := startPub(t, b.URL(), db, nil)
	waitUntil(t, "outbox drained", func() bool { return pendingCount(t, db) == 0 })
	waitUntil(t, "raw payload", func() bool {
		for _, m := range sub.received() {
			if m.topic == topic.Event(testBase) {
				return true
			}
		}
		return false
	})
	var alarms, events int
	for _, m := range sub.received() {
		switch m.topic {
		case topic.Alarm(testBase):
			alarms++
			if want := string(mqtt.WithSeq(good.Payload, seqs[0])); string(m.payload) != want {
				t.Errorf("alarm %s, want %s", m.payload, want)
			}
		case topic.Event(testBase):
			events++
			if string(m.payload) != "[1,2,3]" {
				t.Errorf("raw payload %q changed (WithSeq doc: non-objects unchanged)", m.payload)
			}
		}
	}
	if alarms != 1 || events != 1 {
		t.Errorf("%d alarms and %d events, want 1 and 1", alarms, events)
	}
	if s := r.Stats(); s.Dropped != 1 || s.Acked != 2 {
		t.Errorf("stats %+v: want 1 dropped, 2 acked", s)
	}
}

func TestNewErrors(t *testing.T) {
	t.Parallel()
	db := openStore(t)
	ok := mqtt.Config{Broker: "tcp://127.0.0.1:1883", ClientID: "dc2-gw1", Base: testBase, Outbox: db}
	tests := []struct {
		name string
		mod  func(*mqtt.Config)
		src  string
	}{
		{"empty broker", func(c *mqtt.Config) { c.Broker = "" }, "README, MQTT topics and payloads: tcp:// or ssl://"},
		{"websocket scheme", func(c *mqtt.Config) { c.Broker = "ws://127.0.0.1:80" }, "README, MQTT topics and payloads: tcp:// or ssl:// only"},
		{"no port", func(c *mqtt.Config) { c.Broker = "tcp://gw:" + testPass + "@127.0.0.1" }, "README, MQTT topics and payloads: host:port"},
		{"unparsable with password", func(c *mqtt.Config) { c.Broker = "tcp://gw:" + testPass + "@[::1" }, "RFC 3986 §3.2.2: unclosed IP literal"},
		{"no client id", func(c *mqtt.Config) { c.ClientID = "" }, "MQTT 3.1.1 §3.1.3.1: needed with a clean session? our rule: required"},
		{"wildcard base", func(c *mqtt.Config) { c.Base = "gridloupe/#" }, "MQTT 3.1.1 §4.7.1: no wildcards in a topic name"},
		{"empty level", func(c *mqtt.Config) { c.Base = "gridloupe//dc2-gw1" }, "DESIGN.md: no empty levels"},
		{"dollar base", func(c *mqtt.Config) { c.Base = "$SYS/x" }, "MQTT 3.1.1 §4.7.2: $ topics are the broker's"},
		{"no outbox", func(c *mqtt.Config) { c.Outbox = nil }, "README, MQTT topics and payloads: the outbox is the only queue"},
		{"negative window", func(c *mqtt.Config) { c.InFlight = -1 }, "common practice, no source"},
		{"huge window", func(c *mqtt.Config) { c.InFlight = 70000 }, "MQTT 3.1.1 §2.3.1: 65535 packet identifiers"},
		{"negative timeout", func(c *mqtt.Config) { c.AckTimeout = -time.Second }, "common practice, no source"},
		{"tls on tcp", func(c *mqtt.Config) { c.TLS, _ = mqtt.TLSConfig("", "", "") }, "our rule: TLS settings must not be silently ignored"},
	}
	for _, tc := range tests {
		t.Run(tc.name, func(t *testing.T) {
			t.Parallel()
			cfg := ok
			tc.mod(&cfg)
			_, err := mqtt.New(cfg)
			if !errors.Is(err, mqtt.ErrConfig) {
				t.Fatalf("New: %v, want ErrConfig (%s)", err, tc.src)
			}
			if strings.Contains(err.Error(), testPass) {
				t.Errorf("error shows the password: %v", err)
			}
		})
	}
	if _, err := mqtt.New(ok); err != nil {
		t.Errorf("valid config: %v", err)
	}
}

// TestCutMidFlight cuts the link while windows are in flight (a slowed
// proxy keeps them in flight): nothing is lost, resends keep their seq and
// every seq first arrives in order.
func TestCutMidFlight(t *testing.T) {
	skipPahoResumeRace(t)
	t.Parallel()
	b := mqtttest.Start(t)
	db := openStore(t)
	sub := newSubscriber(t, b.URL(), nil)
	px := newProxy(t, b.Addr(), mqtttest.FreePort(t))
	px.delay = 3 * time.Millisecond
	px.Open(t)
	queued := map[uint64]store.Message{}
	const n = 300
	for i := range n {
		m := alarmMsg(i)
		queued[queue(t, db, m)[0]] = m
	}
	r := startPub(t, px.URL(), db, nil)
	waitUntil(t, "first third delivered", func() bool { return len(sub.outboxMsgs(t)) >= n/3 })
	px.Cut()
	inFlight := n - len(distinct(sub.outboxMsgs(t)))
	px.Open(t)
	waitUntil(t, "all delivered", func() bool { return pendingCount(t, db) == 0 && len(distinct(sub.outboxMsgs(t))) >= n })
	checkDelivery(t, sub.outboxMsgs(t), queued)
	if s := r.Stats(); s.Reconnects < 1 {
		t.Errorf("stats %+v: want a reconnect", s)
	}
	t.Logf("%d of %d undelivered at the cut", inFlight, n)
}

// TestProblemInStatus: a problem the gateway reports (a failing store,
// whose outbox cannot carry the news) is republished at once in the
// retained online status, and cleared the same way (DESIGN: "at runtime an
// error-level log, a status message, and measurement continues").
func TestProblemInStatus(t *testing.T) {
	t.Parallel()
	b := mqtttest.Start(t)
	db := openStore(t)
	sub := newSubscriber(t, b.URL(), nil)
	r := startPub(t, b.URL(), db, func(c *mqtt.Config) { c.StatusEvery = testStatusEvery })
	waitUntil(t, "online", func() bool { return sub.lastStatus(t).Status == "online" })
	r.SetProblem("store: disk full")
	waitUntil(t, "online with the problem", func() bool { return sub.lastStatus(t).Problem == "store: disk full" })
	r.SetProblem("")
	waitUntil(t, "online without a problem", func() bool {
		st := sub.lastStatus(t)
		return st.Status == "online" && st.Problem == ""
	})
}

// testStatusEvery shortens the status debounce for tests (production: 1 min).
const testStatusEvery = 2 * time.Second

// TestStatusDebounced: a problem flapping 40 times in 4 s republishes the
// retained status at most once per StatusEvery, and the last state wins
// (README, Bad conditions: at most one status change a minute).
func TestStatusDebounced(t *testing.T) {
	t.Parallel()
	b := mqtttest.Start(t)
	db := openStore(t)
	sub := mqtttest.Subscribe(t, b.URL(), topic.Status(testBase))
	r := startPub(t, b.URL(), db, func(c *mqtt.Config) { c.StatusEvery = testStatusEvery })
	sub.WaitFor(t, "online", 20*time.Second, func(m []mqtttest.Message) bool { return len(m) >= 1 })
	start := time.Now()
	for i := range 40 {
		if i%2 == 0 {
			r.SetProblem("store: disk full")
		} else {
			r.SetProblem("")
		}
		time.Sleep(100 * time.Millisecond)
	}
	elapsed := time.Since(start)
	r.SetProblem("store: disk full")
	msgs := sub.WaitFor(t, "the final problem", 20*time.Second, func(m []mqtttest.Message) bool {
		return len(m) > 0 && strings.Contains(string(m[len(m)-1].Payload), `"problem":"store: disk full"`)
	})
	// the connect's own status, then one per StatusEvery over the flapping,
	// plus one for the final state and one of slack for timer alignment
	if limit := 1 + int(elapsed/testStatusEvery) + 2; len(msgs) > limit {
		t.Errorf("%d status messages over %v, want at most %d", len(msgs), elapsed, limit)
	}
}

// TestDirect: a direct message reaches the broker without the outbox, and
// of two handed over before the publisher could send (here: before Run)
// only the newer one is sent.
func TestDirect(t *testing.T) {
	t.Parallel()
	b := mqtttest.Start(t)
	db := openStore(t)
	topic := testBase + "/health"
	sub := mqtttest.Subscribe(t, b.URL(), topic)
	p, err := mqtt.New(mqtt.Config{Broker: b.URL(), ClientID: "dc2-gw1-direct", Base: testBase, Outbox: db,
		AckTimeout: testAckTTL, RetryInterval: testRetry, Poll: testPoll})
	if err != nil {
		t.Fatal(err)
	}
	p.Direct(topic, []byte(`{"n":1}`))
	p.Direct(topic, []byte(`{"n":2}`))
	ctx, cancel := context.WithCancel(context.Background())
	done := make(chan error, 1)
	go func() { done <- p.Run(ctx) }()
	defer func() { cancel(); <-done }()
	msgs := sub.WaitFor(t, "the newer direct message", 30*time.Second, func(m []mqtttest.Message) bool { return len(m) > 0 })
	if len(msgs) != 1 || string(msgs[0].Payload) != `{"n":2}` {
		t.Errorf("received %d messages, first %q; want only the newer one", len(msgs), msgs[0].Payload)
	}
	p.Direct(topic, []byte(`{"n":3}`))
	sub.WaitFor(t, "a later direct message", 30*time.Second, func(m []mqtttest.Message) bool { return len(m) == 2 })
	if q, _ := db.Pending(0, 10); len(q) != 0 {
		t.Errorf("%d messages in the outbox, want none", len(q))
	}
	if n := p.Stats().Direct; n != 2 {
		t.Errorf("Stats().Direct = %d, want the 2 sent", n)
	}
}
