// Package topic is the one definition of gridloupe's MQTT topic layout
// below a gateway's base "<prefix>/<site>/<gateway>" (README "MQTT topics
// and payloads"). The gateway, which queues messages, and stream/mqtt,
// which publishes them, both build their topics here. It imports only the
// standard library (no MQTT client), so the gateway stays free of paho.
package topic
