package outbox

import (
	"fmt"

	"github.com/gridloupe/gridloupe/store"
	"github.com/gridloupe/gridloupe/stream/mqtt"
)

// Store is a *store.DB seen as an mqtt.Outbox.
type Store struct{ DB *store.DB }

var _ mqtt.Outbox = Store{}

// Pending returns up to limit queued messages with Seq > after, oldest first.
func (s Store) Pending(after uint64, limit int) ([]mqtt.Message, error) {
	ms, err := s.DB.Pending(after, limit)
	if err != nil {
		return nil, fmt.Errorf("outbox: %w", err)
	}
	out := make([]mqtt.Message, len(ms))
	for i, m := range ms {
		out[i] = mqtt.Message{Seq: m.Seq, Topic: m.Topic, Payload: m.Payload, QoS: m.QoS, Retain: m.Retain, Queued: m.Queued}
	}
	return out, nil
}

// Ack deletes delivered messages from the store's outbox.
func (s Store) Ack(seqs ...uint64) error {
	if err := s.DB.Ack(seqs...); err != nil {
		return fmt.Errorf("outbox: %w", err)
	}
	return nil
}
