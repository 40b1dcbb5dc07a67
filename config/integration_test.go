package config

import (
	"errors"
	"strings"
	"testing"
	"time"
)

// srcIntegration names the contract the integration keys follow.
const srcIntegration = "DESIGN.md, Field contract / Building and plant integration"

func TestIntegrationKeys(t *testing.T) {
	t.Parallel()
	cases := []struct {
		name, doc string
		want      func(c *Config) bool
		src       string
	}{
		{name: "absent sections are off", doc: hdr1,
			want: func(c *Config) bool { return !c.Modbus.Enabled && !c.HTTP.Enabled },
			src:  srcIntegration + " (the servers are opt-in)"},
		{name: "empty mapping is on with loopback defaults", doc: hdr1 + "modbus: {}\nhttp: {}\n",
			want: func(c *Config) bool {
				return c.Modbus == Modbus{Enabled: true, Listen: "127.0.0.1:5020", UnitID: 1, WordOrder: "high_first"} &&
					c.HTTP == HTTP{Enabled: true, Listen: "127.0.0.1:8080"}
			},
			src: srcIntegration + ": modbus {listen: 127.0.0.1:5020, unit_id: 1, word_order: high_first}, http {listen: 127.0.0.1:8080}"},
		{name: "empty value is a missing key", doc: hdr1 + "modbus:\n",
			want: func(c *Config) bool { return !c.Modbus.Enabled },
			src:  "Defaults(): an empty value is the same as a missing key"},
		{name: "sliding 5 minute demand", doc: hdr1 + "demand: {interval: 5m, method: sliding}\n",
			want: func(c *Config) bool { return c.Demand == Demand{Interval: 5 * time.Minute, Method: "sliding"} },
			src:  "common practice, no source: utility demand intervals of 5, 15 or 30 min"},
	}
	for _, tc := range cases {
		t.Run(tc.name, func(t *testing.T) {
			t.Parallel()
			c := mustParse(t, "x.yaml", tc.doc)
			if !tc.want(c) {
				t.Errorf("got modbus %+v http %+v demand %+v (src: %s)", c.Modbus, c.HTTP, c.Demand, tc.src)
			}
		})
	}
}

func TestIntegrationKeysBad(t *testing.T) {
	t.Parallel()
	cases := []badCase{
		{name: "unit id 0", doc: hdr1 + "modbus: {unit_id: 0}\n", line: 4, key: "modbus.unit_id", phrase: "allowed: 1 to 247", src: "Modbus application protocol: unit addresses 1..247 (common practice, no source)"},
		{name: "word order", doc: hdr1 + "modbus: {word_order: big}\n", line: 4, key: "modbus.word_order", phrase: "use one of: high_first, low_first", src: srcIntegration},
		{name: "listen without port", doc: hdr1 + "modbus: {listen: 127.0.0.1}\n", line: 4, key: "modbus.listen", phrase: "is not host:port", src: srcIntegration},
		{name: "http listen", doc: hdr1 + "http: {listen: \"localhost\"}\n", line: 4, key: "http.listen", phrase: "is not host:port", src: srcIntegration},
		{name: "demand 7m", doc: hdr1 + "demand: {interval: 7m}\n", line: 4, key: "demand.interval", phrase: "divide an hour", src: "common practice, no source: demand blocks align to the clock"},
		{name: "demand 2h", doc: hdr1 + "demand: {interval: 2h}\n", line: 4, key: "demand.interval", phrase: "from 1m to 60m", src: "common practice, no source"},
		{name: "demand method", doc: hdr1 + "demand: {method: rolling}\n", line: 4, key: "demand.method", phrase: "use one of: fixed, sliding", src: srcIntegration},
		{name: "unknown modbus key", doc: hdr1 + "modbus: {port: 502}\n", line: 4, key: "modbus.port", phrase: "allowed here: listen, unit_id, word_order", src: srcBrief},
	}
	for _, tc := range cases {
		t.Run(tc.name, func(t *testing.T) {
			t.Parallel()
			_, err := Parse("bad.yaml", []byte(tc.doc))
			var e *Error
			if !errors.As(err, &e) {
				t.Fatalf("Parse: %v, want an *Error (src: %s)", err, tc.src)
			}
			if e.Line != tc.line || e.Key != tc.key || !strings.Contains(e.Msg, tc.phrase) {
				t.Errorf("got %s\nwant line %d key %q containing %q (src: %s)", e, tc.line, tc.key, tc.phrase, tc.src)
			}
		})
	}
}
