// Package outbox adapts the store's outbox (*store.DB) to the MQTT
// publisher's Outbox interface, so that stream/mqtt needs no store import.
// It copies each message's fields; the record schema is the store's.
package outbox
