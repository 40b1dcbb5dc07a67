// Package mqtttest holds test helpers for code that talks MQTT: a real,
// independent mosquitto broker on a free loopback port (Start, New), which
// tests can stop and start again on the same port, and a recording
// subscriber. It is imported only by tests.
package mqtttest
