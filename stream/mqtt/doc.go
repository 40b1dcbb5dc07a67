// Package mqtt publishes gridloupe's queued messages to an MQTT broker. It
// is the only package that imports github.com/eclipse/paho.mqtt.golang; it
// computes nothing and imports neither bbolt nor the store: the store's outbox
// reaches it through the small Outbox interface, in its own Message type
// (the daemon adapts *store.DB in cmd/gridloupe/internal/outbox).
//
// # Queue
//
// The store's outbox is the only queue. A Publisher reads it while the
// client is connected, publishes a small window of messages (Config.InFlight)
// in sequence order, waits for each delivery token in order and deletes the
// delivered prefix from the outbox (Ack). When a token fails or times out,
// or the connection drops, the rest of the window stays queued and is sent
// again, starting at the lowest unacknowledged sequence number. Delivery is
// therefore at least once: a subscriber may see a message twice, always as
// an exact resend carrying the same seq; a seq is never reused and nothing
// acknowledged is lost. QoS 0 messages are only deleted when the connection
// was still open after they were written (a QoS 0 write that raced a
// connection loss is sent again rather than dropped).
//
// paho's (ordered) memory store still holds the in-flight window while
// an automatic reconnect is in progress and resends it after the reconnect;
// the outbox, not paho, survives a restart. The session is clean: the
// broker keeps nothing for the gateway between connections.
//
// # Topics
//
// Every topic starts with the base "<prefix>/<site>/<gateway>", sanitised by
// the config package:
//
//	<base>/status               retained, QoS 1: online / offline
//	<base>/telemetry/<interval> aggregated records (200ms, 3s, 10min, 2h)
//	<base>/alarm                QoS 1, one message per alarm transition
//	<base>/event                voltage events
//
// # Sequence numbers
//
// Every queued payload that is a JSON object goes out with "seq" as its
// first key (see WithSeq): the number the store gave the message when it was
// queued, persisted with it, so a resend keeps its number:
//
//	{"seq":12,"interval":"10min","start":"2026-03-01T10:00:00.000000Z",...}
//
// # Status
//
// On every connect and reconnect the publisher first publishes, retained at
// QoS 1:
//
//	{"status":"online","time":"2026-03-01T10:00:00.000000Z","site":"north-weir-dc2","gateway":"dc2-gw1"}
//
// The Last Will, registered with the broker at connect time, is retained
// QoS 1 on the same topic:
//
//	{"status":"offline","site":"north-weir-dc2","gateway":"dc2-gw1","reason":"connection_lost"}
//
// The broker publishes it when the connection dies without a DISCONNECT
// (power cut, crash, network loss). It is fixed when the client is built, so
// it carries neither a time nor a seq; status messages do not go through
// the outbox and have no seq. A clean shutdown publishes
//
//	{"status":"offline","time":"...","site":"...","gateway":"...","reason":"shutdown"}
//
// before disconnecting. site and gateway are the last two levels of the base.
//
// # Secrets
//
// The password is never logged. User information in the broker URL is moved
// into the credentials and stripped from the URL before paho sees it, and
// every error string the publisher logs or reports has the password masked.
package mqtt
