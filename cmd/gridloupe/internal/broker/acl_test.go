package broker_test

import (
	"testing"
	"time"

	paho "github.com/eclipse/paho.mqtt.golang"

	"github.com/gridloupe/gridloupe/cmd/gridloupe/internal/broker"
	"github.com/gridloupe/gridloupe/stream/mqtt/topic"
)

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
