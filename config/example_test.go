package config_test

import (
	"errors"
	"fmt"
	"path/filepath"
	"strings"

	"github.com/gridloupe/gridloupe/config"
)

func ExampleParse() {
	doc := `site: north-weir-dc2
gateway: dc2-gw1
nominal: {frequency_hz: 50, voltage_v: 230}
harmonics: [5, 7, 11, 13]
il_a: 160
channels:
  - {name: va, kind: voltage, phase: a, full_scale: 400}
  - {name: ia, kind: current, phase: a}
`
	c, err := config.Parse("dc2.yaml", []byte(doc))
	if err != nil {
		fmt.Println(err)
		return
	}
	fmt.Println(c.Wiring, c.Reference, c.Harmonics.Orders)
	fmt.Println(c.MQTT.Base, c.MQTT.Telemetry)
	fmt.Printf("fs must exceed %.0f Hz\n", c.MinSampleRateHz())
	// Output:
	// wye va [1 5 7 11 13]
	// gridloupe/north-weir-dc2/dc2-gw1 [10min]
	// fs must exceed 1495 Hz
}

func ExampleLoad() {
	c, err := config.Load(filepath.Join("testdata", "north-weir.yaml"))
	if err != nil {
		fmt.Println(err)
		return
	}
	a := c.Alarms[0]
	fmt.Println(c.Site, c.Nominal.FrequencyHz, c.ILA, len(c.Channels))
	fmt.Println(a.Name, a.Metric, *a.Above, a.OnDelay)
	// Output:
	// north-weir-dc2 50 160 2
	// current-distortion tdd_h50_pct 8 20m0s
}

func ExampleError() {
	doc := `nominal: {frequency_hz: 50, voltage_v: 230}
channels:
  - {name: va, kind: voltage, phase: a}
  - {name: ib, kind: current, phase: x}
`
	_, err := config.Parse("dc2.yaml", []byte(doc))
	var e *config.Error
	if errors.As(err, &e) {
		fmt.Println(e.Line, e.Key)
		fmt.Println(err)
	}
	fmt.Println(errors.Is(err, config.ErrInvalid))
	// Output:
	// 4 channels[1].phase
	// dc2.yaml:4:38: channels[1].phase: "x" is not allowed; use one of: a, b, c, n, ab, bc, ca, ba, cb, ac
	// true
}

func ExampleDefaults() {
	doc := config.Defaults()
	fmt.Println(strings.Contains(doc, "harmonics: all"), strings.Contains(doc, "commit_every: 60s"))
	// Output:
	// true true
}

func ExampleMQTT_Password() {
	m := config.MQTT{} // neither password_file nor password_env: no password
	p, err := m.Password()
	fmt.Printf("%q %v\n", p, err)
	// Output:
	// "" <nil>
}
