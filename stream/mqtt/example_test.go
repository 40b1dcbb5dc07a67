package mqtt_test

import (
	"context"
	"fmt"
	"os"
	"path/filepath"
	"time"

	paho "github.com/eclipse/paho.mqtt.golang"

	"github.com/gridloupe/gridloupe/store"
	"github.com/gridloupe/gridloupe/stream/mqtt"
	"github.com/gridloupe/gridloupe/stream/mqtt/broker"
	"github.com/gridloupe/gridloupe/stream/mqtt/topic"
)

func ExampleWithSeq() {
	fmt.Println(string(mqtt.WithSeq([]byte(`{"name":"current-distortion","state":"raised"}`), 12)))
	fmt.Println(string(mqtt.WithSeq([]byte(`[1,2]`), 13)))
	// Output:
	// {"seq":12,"name":"current-distortion","state":"raised"}
	// [1,2]
}

// ExamplePublisher_Run queues an alarm in a store, runs a publisher against
// the embedded broker and reads the alarm back with a second client.
func ExamplePublisher_Run() {
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
	p, err := mqtt.New(mqtt.Config{Broker: b.GatewayURL(), ClientID: "dc2-gw1", Base: base, Outbox: db, Username: user, Password: pass})
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
