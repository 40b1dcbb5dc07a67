package main

import (
	"testing"

	"github.com/gridloupe/gridloupe/config"
)

// TestEmbeddedAddr: where the embedded broker listens: the demo's own
// address first, then mqtt.listen, else 127.0.0.1:1883 (config.MQTT.Listen's
// documented default: loopback, the standard MQTT port).
func TestEmbeddedAddr(t *testing.T) {
	for _, c := range []struct {
		name, demo, listen, want string
	}{
		{"default", "", "", "127.0.0.1:1883"},
		{"mqtt.listen", "", "0.0.0.0:8883", "0.0.0.0:8883"},
		{"demo's free port", "127.0.0.1:0", "0.0.0.0:8883", "127.0.0.1:0"},
	} {
		cfg := &config.Config{}
		cfg.MQTT.Listen = c.listen
		if got := embeddedAddr(daemonOptions{brokerAddr: c.demo}, cfg); got != c.want {
			t.Errorf("%s: embeddedAddr = %q, want %q", c.name, got, c.want)
		}
	}
}
