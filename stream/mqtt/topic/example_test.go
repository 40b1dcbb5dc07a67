package topic_test

import (
	"fmt"

	"github.com/gridloupe/gridloupe/stream/mqtt/topic"
)

func ExampleTelemetry() {
	base := "gridloupe/north-weir-dc2/dc2-gw1"
	fmt.Println(topic.Telemetry(base, "10min"))
	fmt.Println(topic.Status(base))
	fmt.Println(topic.Health(base))
	// Output:
	// gridloupe/north-weir-dc2/dc2-gw1/telemetry/10min
	// gridloupe/north-weir-dc2/dc2-gw1/status
	// gridloupe/north-weir-dc2/dc2-gw1/health
}
