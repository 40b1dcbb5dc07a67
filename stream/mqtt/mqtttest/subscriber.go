package mqtttest

import (
	"bytes"
	"strconv"
	"sync"
	"sync/atomic"
	"testing"
	"time"

	paho "github.com/eclipse/paho.mqtt.golang"
)

// Message is one message a Subscriber received.
type Message struct {
	Topic    string
	Payload  []byte
	Retained bool
	QoS      byte // as delivered: the lower of the publish and the subscription QoS
}

// Subscriber is an independent MQTT client, as a building management
// system would run: it subscribes to a filter on every (re)connect and
// records what arrives. Safe for concurrent use.
type Subscriber struct {
	c      paho.Client
	mu     sync.Mutex
	msgs   []Message
	subbed atomic.Uint64
}

// Subscribe connects to url (tcp://host:port) and subscribes to filter at
// QoS 1; it waits until the first subscription is acknowledged and
// disconnects in t.Cleanup.
func Subscribe(t testing.TB, url, filter string) *Subscriber {
	t.Helper()
	s := new(Subscriber)
	o := paho.NewClientOptions().AddBroker(url).
		SetClientID("bms-" + strconv.FormatInt(time.Now().UnixNano(), 36)).
		SetCleanSession(true).SetAutoReconnect(true).SetConnectRetry(true).
		SetConnectRetryInterval(200 * time.Millisecond).SetMaxReconnectInterval(time.Second).SetProtocolVersion(4)
	o.SetOnConnectHandler(func(c paho.Client) {
		tok := c.Subscribe(filter, 1, func(_ paho.Client, m paho.Message) {
			s.mu.Lock()
			s.msgs = append(s.msgs, Message{m.Topic(), bytes.Clone(m.Payload()), m.Retained(), m.Qos()})
			s.mu.Unlock()
		})
		if tok.WaitTimeout(15*time.Second) && tok.Error() == nil {
			s.subbed.Add(1)
		}
	})
	s.c = paho.NewClient(o)
	s.c.Connect()
	t.Cleanup(func() { s.c.Disconnect(100) })
	deadline := time.Now().Add(20 * time.Second)
	for s.subbed.Load() == 0 {
		if time.Now().After(deadline) {
			t.Fatalf("mqtttest: subscriber to %s on %s not subscribed within 20 s", filter, url)
		}
		time.Sleep(20 * time.Millisecond)
	}
	return s
}

// Received returns a copy of what arrived so far.
func (s *Subscriber) Received() []Message {
	s.mu.Lock()
	defer s.mu.Unlock()
	return append([]Message(nil), s.msgs...)
}

// WaitFor polls until cond holds on what has arrived, or fails the test
// after timeout.
func (s *Subscriber) WaitFor(t testing.TB, what string, timeout time.Duration, cond func(msgs []Message) bool) []Message {
	t.Helper()
	deadline := time.Now().Add(timeout)
	for {
		m := s.Received()
		if cond(m) {
			return m
		}
		if time.Now().After(deadline) {
			t.Fatalf("mqtttest: %s: not seen within %v (%d messages received)", what, timeout, len(m))
		}
		time.Sleep(50 * time.Millisecond)
	}
}
