package mqtt_test

import (
	"bytes"
	"context"
	"encoding/json"
	"errors"
	"io"
	"log/slog"
	"net"
	"os"
	"path/filepath"
	"strconv"
	"sync"
	"sync/atomic"
	"testing"
	"time"

	paho "github.com/eclipse/paho.mqtt.golang"

	"github.com/gridloupe/gridloupe/store"
	"github.com/gridloupe/gridloupe/stream/mqtt"
	"github.com/gridloupe/gridloupe/stream/mqtt/mqtttest"
	"github.com/gridloupe/gridloupe/stream/mqtt/topic"
)

// Timing for tests on a loaded 2-core machine.
const (
	waitLong   = 45 * time.Second       // upper bound for any delivery; tests poll and finish as soon as it happens
	pollEvery  = 20 * time.Millisecond  // polling step while waiting
	testPoll   = 100 * time.Millisecond // Config.Poll in tests: short, so kicks are not needed for speed
	testRetry  = 200 * time.Millisecond // Config.RetryInterval in tests
	testRecon  = time.Second            // Config.MaxReconnect in tests (paho's floor is its 1 s first back-off)
	testAckTTL = 5 * time.Second        // Config.AckTimeout in tests
)

const (
	testBase = "gridloupe/north-weir-dc2/dc2-gw1" // invented demo site (DESIGN.md)
	testPass = "weir-pump-7Q"                     // must never show up in logs
)

// testDB is a real bbolt store seen as an mqtt.Outbox. The daemon's own
// adapter (cmd/gridloupe/internal/outbox) is internal to the command, so the
// publisher's tests carry this copy of its few lines.
type testDB struct{ *store.DB }

func (d testDB) Pending(after uint64, limit int) ([]mqtt.Message, error) {
	ms, err := d.DB.Pending(after, limit)
	out := make([]mqtt.Message, len(ms))
	for i, m := range ms {
		out[i] = mqtt.Message{Seq: m.Seq, Topic: m.Topic, Payload: m.Payload, QoS: m.QoS, Retain: m.Retain, Queued: m.Queued}
	}
	return out, err
}

// openStore opens a real bbolt store in t.TempDir().
func openStore(t testing.TB) testDB {
	t.Helper()
	db, err := store.Open(store.Options{Path: filepath.Join(t.TempDir(), "gridloupe.db"), NoSync: true})
	if err != nil {
		t.Fatalf("store: %v", err)
	}
	t.Cleanup(func() { _ = db.Close() })
	return testDB{db}
}

// running is a Publisher whose Run goroutine the test owns.
type running struct {
	*mqtt.Publisher
	cancel context.CancelFunc
	done   chan error
	logs   *mqtttest.LockedBuffer
}

// startPub builds a publisher for url over db with test timings, lets mod
// adjust the config, and runs it until the test ends.
func startPub(t testing.TB, url string, db mqtt.Outbox, mod func(*mqtt.Config)) *running {
	t.Helper()
	logs := new(mqtttest.LockedBuffer)
	cfg := mqtt.Config{
		Broker: url, ClientID: "dc2-gw1-" + strconv.FormatInt(time.Now().UnixNano(), 36), Base: testBase, Outbox: db,
		AckTimeout: testAckTTL, MaxReconnect: testRecon, RetryInterval: testRetry, Poll: testPoll,
		Logger: slog.New(slog.NewTextHandler(logs, &slog.HandlerOptions{Level: slog.LevelDebug})),
	}
	if mod != nil {
		mod(&cfg)
	}
	p, err := mqtt.New(cfg)
	if err != nil {
		t.Fatalf("New: %v", err)
	}
	ctx, cancel := context.WithCancel(context.Background())
	r := &running{Publisher: p, cancel: cancel, done: make(chan error, 1), logs: logs}
	go func() { r.done <- p.Run(ctx) }()
	t.Cleanup(func() {
		r.stop(t)
		if testing.Verbose() {
			t.Log(logs.String())
		}
		if s := logs.String(); bytes.Contains([]byte(s), []byte(testPass)) {
			t.Errorf("password in the publisher's log:\n%s", s)
		}
	})
	return r
}

// stop cancels Run and waits for it (bounded); it returns how long Run took.
func (r *running) stop(t testing.TB) time.Duration {
	t.Helper()
	r.cancel()
	t0 := time.Now()
	select {
	case err, ok := <-r.done:
		if ok && err != nil {
			t.Errorf("Run: %v", err)
		}
		if ok {
			close(r.done)
		}
	case <-time.After(waitLong):
		t.Fatalf("Run did not return within %v of cancel", waitLong)
	}
	return time.Since(t0)
}

// rx is one message a subscriber received.
type rx struct {
	topic    string
	payload  []byte
	retained bool
}

// subscriber is an independent paho client on <base>/#, resubscribing on
// every reconnect.
type subscriber struct {
	c      paho.Client
	mu     sync.Mutex
	msgs   []rx
	subbed atomic.Uint64 // completed subscriptions (one per connection)
}

func newSubscriber(t testing.TB, url string, mod func(*paho.ClientOptions)) *subscriber {
	t.Helper()
	s := new(subscriber)
	o := paho.NewClientOptions().AddBroker(url).
		SetClientID("bms-" + strconv.FormatInt(time.Now().UnixNano(), 36)).
		SetCleanSession(true).SetAutoReconnect(true).SetConnectRetry(true).
		SetConnectRetryInterval(testRetry).SetMaxReconnectInterval(testRecon).SetProtocolVersion(4)
	o.SetOnConnectHandler(func(c paho.Client) {
		tok := c.Subscribe(testBase+"/#", 1, func(_ paho.Client, m paho.Message) {
			s.mu.Lock()
			s.msgs = append(s.msgs, rx{m.Topic(), bytes.Clone(m.Payload()), m.Retained()})
			s.mu.Unlock()
		})
		if tok.WaitTimeout(waitLong) && tok.Error() == nil {
			s.subbed.Add(1)
		}
	})
	if mod != nil {
		mod(o)
	}
	s.c = paho.NewClient(o)
	s.c.Connect()
	t.Cleanup(func() { s.c.Disconnect(100) })
	waitUntil(t, "subscriber subscribed", func() bool { return s.subbed.Load() > 0 })
	return s
}

// received returns a copy of what arrived so far.
func (s *subscriber) received() []rx {
	s.mu.Lock()
	defer s.mu.Unlock()
	return append([]rx(nil), s.msgs...)
}

// statuses returns the decoded status payloads received, in order.
func (s *subscriber) statuses(t testing.TB) []statusMsg {
	t.Helper()
	var out []statusMsg
	for _, m := range s.received() {
		if m.topic != topic.Status(testBase) {
			continue
		}
		var st statusMsg
		if err := json.Unmarshal(m.payload, &st); err != nil {
			t.Fatalf("status payload %q: %v", m.payload, err)
		}
		st.retained = m.retained
		out = append(out, st)
	}
	return out
}

// lastStatus returns the latest status received, or a zero one.
func (s *subscriber) lastStatus(t testing.TB) statusMsg {
	t.Helper()
	st := s.statuses(t)
	if len(st) == 0 {
		return statusMsg{}
	}
	return st[len(st)-1]
}

type statusMsg struct {
	Status   string `json:"status"`
	Time     string `json:"time"`
	Site     string `json:"site"`
	Gateway  string `json:"gateway"`
	Reason   string `json:"reason"`
	Problem  string `json:"problem"`
	retained bool
}

// seqMsg is a received outbox message with its seq decoded.
type seqMsg struct {
	seq   uint64
	topic string
	body  map[string]any // payload without seq
	raw   []byte
}

// outboxMsgs decodes the non-status messages received; each must be a JSON
// object whose first key is seq.
func (s *subscriber) outboxMsgs(t testing.TB) []seqMsg {
	t.Helper()
	var out []seqMsg
	for _, m := range s.received() {
		if m.topic == topic.Status(testBase) {
			continue
		}
		if k := firstKey(t, m.payload); k != "seq" {
			t.Fatalf("%s payload %q: first key %q, want seq", m.topic, m.payload, k)
		}
		var body map[string]any
		d := json.NewDecoder(bytes.NewReader(m.payload))
		d.UseNumber()
		if err := d.Decode(&body); err != nil {
			t.Fatalf("%s payload %q: %v", m.topic, m.payload, err)
		}
		n, err := strconv.ParseUint(string(body["seq"].(json.Number)), 10, 64)
		if err != nil {
			t.Fatalf("seq in %q: %v", m.payload, err)
		}
		delete(body, "seq")
		out = append(out, seqMsg{seq: n, topic: m.topic, body: body, raw: m.payload})
	}
	return out
}

// waitUntil polls cond until it holds or waitLong passes.
func waitUntil(t testing.TB, what string, cond func() bool) {
	t.Helper()
	mqtttest.WaitUntil(t, what, waitLong, pollEvery, cond)
}

// proxy forwards TCP connections to an upstream broker. Open starts it on a
// fixed loopback port; Cut closes the listener and every connection
// abruptly (RST), as a pulled cable or a dead gateway looks to the broker.
type proxy struct {
	addr, upstream string
	mu             sync.Mutex
	ln             net.Listener
	conns          map[net.Conn]struct{}
	wg             sync.WaitGroup
	delay          time.Duration // slows the client-to-broker direction, per read
}

func newProxy(t testing.TB, upstream string, port int) *proxy {
	p := &proxy{addr: net.JoinHostPort("127.0.0.1", strconv.Itoa(port)), upstream: upstream, conns: map[net.Conn]struct{}{}}
	t.Cleanup(p.Cut)
	return p
}

func (p *proxy) URL() string { return "tcp://" + p.addr }

// Open starts accepting connections.
func (p *proxy) Open(t testing.TB) {
	t.Helper()
	ln, err := net.Listen("tcp", p.addr)
	if err != nil {
		t.Fatalf("proxy listen %s: %v", p.addr, err)
	}
	p.mu.Lock()
	p.ln = ln
	p.mu.Unlock()
	p.wg.Add(1)
	go func() {
		defer p.wg.Done()
		for {
			c, err := ln.Accept()
			if err != nil {
				return
			}
			u, err := net.DialTimeout("tcp", p.upstream, 5*time.Second)
			if err != nil {
				_ = c.Close()
				continue
			}
			if !p.track(c, u) {
				return
			}
			p.wg.Add(2)
			go p.pipe(c, u, 0)
			go p.pipe(u, c, p.delay)
		}
	}()
}

func (p *proxy) track(cs ...net.Conn) bool {
	p.mu.Lock()
	defer p.mu.Unlock()
	if p.ln == nil {
		for _, c := range cs {
			_ = c.Close()
		}
		return false
	}
	for _, c := range cs {
		p.conns[c] = struct{}{}
	}
	return true
}

func (p *proxy) pipe(dst, src net.Conn, delay time.Duration) {
	defer p.wg.Done()
	if delay == 0 {
		_, _ = io.Copy(dst, src)
	} else {
		buf := make([]byte, 512)
		for {
			n, err := src.Read(buf)
			time.Sleep(delay) // a slow uplink
			if n > 0 {
				if _, werr := dst.Write(buf[:n]); werr != nil {
					break
				}
			}
			if err != nil {
				break
			}
		}
	}
	_ = dst.Close()
	_ = src.Close()
}

// Cut stops the proxy and resets every connection.
func (p *proxy) Cut() {
	p.mu.Lock()
	if p.ln != nil {
		_ = p.ln.Close()
		p.ln = nil
	}
	for c := range p.conns {
		if tc, ok := c.(*net.TCPConn); ok {
			_ = tc.SetLinger(0) // RST, no FIN: an abrupt loss
		}
		_ = c.Close()
	}
	clear(p.conns)
	p.mu.Unlock()
	p.wg.Wait()
}

// queue enqueues msgs and returns their seqs.
func queue(t testing.TB, db testDB, msgs ...store.Message) []uint64 {
	t.Helper()
	seqs, err := db.Enqueue(msgs...)
	if err != nil {
		t.Fatalf("Enqueue: %v", err)
	}
	return seqs
}

// alarmMsg is an invented alarm transition payload (shape documented in the README by cmd).
func alarmMsg(i int) store.Message {
	body, _ := json.Marshal(map[string]any{
		"name": "current-distortion", "state": []string{"raised", "cleared"}[i%2], "channel": "ia",
		"metric": "tdd_h50_pct", "value": 8.25 + float64(i)/100, "time": time.Date(2026, 3, 1, 10, i%60, 0, 0, time.UTC).Format("2006-01-02T15:04:05.000000Z"),
	})
	return store.Message{Class: store.ClassAlarm, Topic: topic.Alarm(testBase), Payload: body, QoS: 1}
}

// telemetryMsg is an invented 10-minute telemetry payload.
func telemetryMsg(i int) store.Message {
	body, _ := json.Marshal(map[string]any{
		"interval": "10min", "start": time.Date(2026, 3, 1, 10, 0, 0, 0, time.UTC).Add(time.Duration(i) * 10 * time.Minute).Format("2006-01-02T15:04:05.000000Z"),
		"duration_s": 600, "freq_hz": 50.01, "flags": []string{},
	})
	return store.Message{Class: store.ClassTelemetry, Topic: topic.Telemetry(testBase, "10min"), Payload: body, QoS: 1}
}

// pendingCount returns how many messages are still queued.
func pendingCount(t testing.TB, db testDB) int {
	t.Helper()
	m, err := db.Pending(0, 1<<20)
	if err != nil {
		t.Fatalf("Pending: %v", err)
	}
	return len(m)
}

// checkDelivery checks that the outbox messages received carry exactly the
// queued seqs, each first occurrence in ascending order, with any repeat an
// exact resend (same payload), and each body equal to what was queued.
func checkDelivery(t testing.TB, got []seqMsg, queued map[uint64]store.Message) {
	t.Helper()
	seen := map[uint64][]byte{}
	var last uint64
	dups := 0
	for _, m := range got {
		q, ok := queued[m.seq]
		if !ok {
			t.Errorf("received seq %d that was never queued (%s)", m.seq, m.raw)
			continue
		}
		if prev, ok := seen[m.seq]; ok {
			dups++
			if !bytes.Equal(prev, m.raw) {
				t.Errorf("seq %d resent with a different payload:\n%s\n%s", m.seq, prev, m.raw)
			}
			continue
		}
		if m.seq <= last {
			t.Errorf("seq %d first arrived after seq %d: out of order", m.seq, last)
		}
		last = m.seq
		seen[m.seq] = m.raw
		if m.topic != q.Topic {
			t.Errorf("seq %d on %q, queued for %q", m.seq, m.topic, q.Topic)
		}
		var want map[string]any
		d := json.NewDecoder(bytes.NewReader(q.Payload))
		d.UseNumber()
		if err := d.Decode(&want); err != nil {
			t.Fatalf("queued payload: %v", err)
		}
		if a, b := mustJSON(t, m.body), mustJSON(t, want); a != b {
			t.Errorf("seq %d body %s, queued %s", m.seq, a, b)
		}
	}
	for s := range queued {
		if _, ok := seen[s]; !ok {
			t.Errorf("seq %d queued but never received", s)
		}
	}
	if dups > 0 {
		t.Logf("%d exact resends (allowed: at-least-once)", dups)
	}
}

func mustJSON(t testing.TB, v any) string {
	t.Helper()
	b, err := json.Marshal(v) // map keys sorted: a canonical form
	if err != nil {
		t.Fatal(err)
	}
	return string(b)
}

// errOutbox wraps an outbox and fails Ack while fail is set.
type errOutbox struct {
	testDB
	fail atomic.Bool
}

var errInjected = errors.New("injected ack failure")

func (e *errOutbox) Ack(seqs ...uint64) error {
	if e.fail.Load() {
		return errInjected
	}
	return e.testDB.Ack(seqs...)
}

func writeFile(t testing.TB, path, text string) {
	t.Helper()
	if err := os.WriteFile(path, []byte(text), 0o600); err != nil {
		t.Fatal(err)
	}
}

// skipPahoResumeRace skips a test that drops the link with publishes in
// flight when it runs under the race detector: paho v1.5.1 sets a resent
// packet's DUP flag in resume() while its outgoing goroutine may still be
// writing that packet, a race inside the client reported upstream
// (eclipse-paho/paho.mqtt.golang issue 703, open). The test still runs, with
// all its assertions, in the ordinary (no -race) pass of the suite.
func skipPahoResumeRace(t *testing.T) {
	t.Helper()
	if raceEnabled {
		t.Skip("paho v1.5.1 races in resume() on reconnect with publishes in flight (upstream issue 703); runs without -race")
	}
}
