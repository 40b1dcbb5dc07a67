package broker_test

import (
	"context"
	"fmt"
	"net"
	"os"
	"path/filepath"
	"time"

	paho "github.com/eclipse/paho.mqtt.golang"

	"github.com/gridloupe/gridloupe/cmd/gridloupe/internal/broker"
	"github.com/gridloupe/gridloupe/cmd/gridloupe/internal/outbox"
	"github.com/gridloupe/gridloupe/store"
	"github.com/gridloupe/gridloupe/stream/mqtt"
	"github.com/gridloupe/gridloupe/stream/mqtt/topic"
)

func ExampleStart() {
	b, err := broker.Start(broker.Config{Addr: "127.0.0.1:0"}) // port 0: pick a free one
	if err != nil {
		fmt.Println(err)
		return
	}
	defer b.Close()
	host, _, _ := net.SplitHostPort(b.Addr())
	fmt.Println("listening on", host)

	_, err = broker.Start(broker.Config{Addr: "0.0.0.0:1883"})
	fmt.Println(err)
	// Output:
	// listening on 127.0.0.1
	// broker: address "0.0.0.0:1883": not loopback and no TLS and no username and password: broker: non-loopback address needs TLS and credentials
}

// Example_publisher queues an alarm in a store, runs a publisher against
// the embedded broker and reads the alarm back with a second client.
func Example_publisher() {
	dir, _ := os.MkdirTemp("", "gridloupe-example")
	defer os.RemoveAll(dir)
	db, err := store.Open(store.Options{Path: filepath.Join(dir, "gridloupe.db"), NoSync: true})
	if err != nil {
		fmt.Println(err)
		return
	}
	defer db.Close()
	b, err := broker.Start(broker.Config{Addr: "127.0.0.1:0"})
	if err != nil {
		fmt.Println(err)
		return
	}
	defer b.Close()

	base := "gridloupe/north-weir-dc2/dc2-gw1"
	got := make(chan string, 1)
	sub := paho.NewClient(paho.NewClientOptions().AddBroker("tcp://" + b.Addr()).SetClientID("bms"))
	if tok := sub.Connect(); !tok.WaitTimeout(10*time.Second) || tok.Error() != nil {
		fmt.Println("subscriber cannot connect")
		return
	}
	defer sub.Disconnect(100)
	sub.Subscribe(topic.Alarm(base), 1, func(_ paho.Client, m paho.Message) { got <- string(m.Payload()) }).WaitTimeout(10 * time.Second)

	if _, err := db.Enqueue(store.Message{Class: store.ClassAlarm, Topic: topic.Alarm(base), QoS: 1,
		Payload: []byte(`{"name":"current-distortion","state":"raised"}`)}); err != nil {
		fmt.Println(err)
		return
	}
	user, pass := b.GatewayLogin() // only the gateway's own login may publish
	p, err := mqtt.New(mqtt.Config{Broker: b.GatewayURL(), ClientID: "dc2-gw1", Base: base, Outbox: outbox.Store{DB: db}, Username: user, Password: pass})
	if err != nil {
		fmt.Println(err)
		return
	}
	ctx, cancel := context.WithCancel(context.Background())
	done := make(chan error)
	go func() { done <- p.Run(ctx) }()
	select {
	case s := <-got:
		fmt.Println(s)
	case <-time.After(30 * time.Second):
		fmt.Println("nothing arrived")
	}
	cancel()
	fmt.Println("run:", <-done)
	// Output:
	// {"seq":1,"name":"current-distortion","state":"raised"}
	// run: <nil>
}
