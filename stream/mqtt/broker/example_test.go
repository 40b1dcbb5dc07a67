package broker_test

import (
	"fmt"
	"net"

	"github.com/gridloupe/gridloupe/stream/mqtt/broker"
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
