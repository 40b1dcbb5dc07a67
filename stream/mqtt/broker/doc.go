// Package broker runs a small embedded MQTT broker (mochi-mqtt) for a
// gateway with no broker of its own (config "broker: embedded"), so that a
// local building-management client can subscribe to gridloupe's topics. It
// is the only package that imports github.com/mochi-mqtt/server; it knows
// nothing about topics or payloads.
//
// The broker listens on one TCP address, loopback by default. Listening
// anywhere else needs TLS and a username and password; without them Start
// refuses. Without credentials every loopback client is allowed; with them
// every client must present them. The broker keeps nothing on disk:
// retained messages and sessions live in memory and end with the process.
package broker
