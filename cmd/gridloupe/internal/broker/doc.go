// Package broker runs a small embedded MQTT broker (mochi-mqtt) for a
// gateway with no broker of its own (config "broker: embedded"), so that a
// local building-management client can subscribe to gridloupe's topics. It
// is the only package that imports github.com/mochi-mqtt/server; it knows
// nothing about topics or payloads.
//
// The broker listens on one TCP address, loopback by default. Listening
// anywhere else needs TLS and a username and password; without them Start
// refuses. The gateway itself logs in with a login made afresh at every
// Start (GatewayLogin) over plain TCP on loopback (GatewayURL: with TLS, a
// loopback listener of its own), so it never needs a certificate that
// matches the listen address. Only the gateway may publish under
// Config.Prefix. Other clients present the configured username and
// password and may subscribe anywhere and publish elsewhere; without a
// configured login they are anonymous, loopback only, and may only
// subscribe. The broker keeps nothing on disk: retained messages and
// sessions live in memory and end with the process.
package broker
