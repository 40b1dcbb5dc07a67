package outbox_test

import (
	"path/filepath"
	"testing"
	"time"

	"github.com/gridloupe/gridloupe/cmd/gridloupe/internal/outbox"
	"github.com/gridloupe/gridloupe/store"
	"github.com/gridloupe/gridloupe/stream/mqtt"
)

// TestStore queues messages in a real bbolt store and reads them back
// through the adapter: every field the publisher uses arrives unchanged,
// after and limit select as the store does, and Ack deletes.
func TestStore(t *testing.T) {
	db, err := store.Open(store.Options{Path: filepath.Join(t.TempDir(), "gridloupe.db"), NoSync: true})
	if err != nil {
		t.Fatal(err)
	}
	t.Cleanup(func() { _ = db.Close() })
	q := time.Date(2026, 3, 1, 10, 0, 0, 0, time.UTC) // invented
	in := []store.Message{
		{Class: store.ClassAlarm, Topic: "gridloupe/north-weir-dc2/dc2-gw1/alarm", Payload: []byte(`{"name":"a"}`), QoS: 1, Queued: q},
		{Class: store.ClassTelemetry, Topic: "gridloupe/north-weir-dc2/dc2-gw1/summary/10min", Payload: []byte(`{"v":2}`), QoS: 0, Retain: true, Queued: q.Add(time.Second)},
		{Class: store.ClassTelemetry, Topic: "gridloupe/north-weir-dc2/dc2-gw1/telemetry/3s", Payload: []byte(`{"v":3}`), QoS: 2, Queued: q.Add(2 * time.Second)},
	}
	seqs, err := db.Enqueue(in...)
	if err != nil {
		t.Fatal(err)
	}
	ob := outbox.Store{DB: db}
	got, err := ob.Pending(0, 10)
	if err != nil {
		t.Fatal(err)
	}
	if len(got) != len(in) {
		t.Fatalf("%d pending, want %d", len(got), len(in))
	}
	for i, m := range got {
		want := mqtt.Message{Seq: seqs[i], Topic: in[i].Topic, Payload: in[i].Payload, QoS: in[i].QoS, Retain: in[i].Retain, Queued: in[i].Queued}
		if m.Seq != want.Seq || m.Topic != want.Topic || string(m.Payload) != string(want.Payload) ||
			m.QoS != want.QoS || m.Retain != want.Retain || !m.Queued.Equal(want.Queued) {
			t.Errorf("message %d: %+v, want %+v (the fields as queued)", i, m, want)
		}
	}
	if got, _ := ob.Pending(seqs[0], 1); len(got) != 1 || got[0].Seq != seqs[1] {
		t.Errorf("Pending(after %d, 1) = %+v, want only seq %d", seqs[0], got, seqs[1])
	}
	if err := ob.Ack(seqs[0], seqs[1]); err != nil {
		t.Fatal(err)
	}
	if got, _ := ob.Pending(0, 10); len(got) != 1 || got[0].Seq != seqs[2] {
		t.Errorf("after Ack: %+v, want only seq %d", got, seqs[2])
	}
	_ = db.Close()
	if _, err := ob.Pending(0, 10); err == nil {
		t.Error("Pending on a closed store: no error")
	}
}
