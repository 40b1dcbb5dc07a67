package mqtt_test

import (
	"fmt"

	"github.com/gridloupe/gridloupe/stream/mqtt"
)

func ExampleWithSeq() {
	fmt.Println(string(mqtt.WithSeq([]byte(`{"name":"current-distortion","state":"raised"}`), 12)))
	fmt.Println(string(mqtt.WithSeq([]byte(`[1,2]`), 13)))
	// Output:
	// {"seq":12,"name":"current-distortion","state":"raised"}
	// [1,2]
}
