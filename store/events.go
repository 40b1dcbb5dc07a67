package store

import (
	"encoding/json"
	"errors"
	"fmt"
	"time"

	bolt "go.etcd.io/bbolt"

	"github.com/gridloupe/gridloupe/metrics/events"
)

// Buckets of voltage events and their waveforms, created on first write,
// keyed alike: big-endian start (ns) and a sequence number.
var (
	bktEvents    = []byte("events")
	bktWaveforms = []byte("event_waveforms")
)

// eventVersion leads every stored event record.
const eventVersion = 1

// Event caps. Waveforms may use a quarter of the usable file (at the
// default 512 MiB, about 260 four-second captures of six channels at
// 10.24 kHz); beyond it the oldest waveforms go, then, past maxEvents,
// the oldest event records. Each loss is counted in the event_waveform and
// event classes of Losses, as the outbox's own caps are.
const (
	waveShare = 4
	maxEvents = 20000
)

func encodeEvent(r *events.Record) ([]byte, error) {
	b, err := json.Marshal(r)
	if err != nil {
		return nil, fmt.Errorf("store: encode event: %w", err)
	}
	return append([]byte{eventVersion}, b...), nil
}

func decodeEvent(v []byte) (events.Record, error) {
	var r events.Record
	if len(v) < 2 || v[0] != eventVersion {
		return r, fmt.Errorf("event record: %w", ErrCorrupt)
	}
	if err := json.Unmarshal(v[1:], &r); err != nil {
		return r, fmt.Errorf("%w: %w", ErrCorrupt, err)
	}
	return r, nil
}

// PutEvent stores an event, its waveform (nil = none) and, when msg is not
// nil, its outbox message, in one transaction committed at once. The
// message's seq is returned and stored in the record. The waveform and
// event caps apply in the same transaction.
func (db *DB) PutEvent(r events.Record, wave []byte, msg *Message) (uint64, error) {
	if err := db.beginWrite(); err != nil {
		return 0, err
	}
	defer db.wmu.Unlock()
	var seq uint64
	add := int64(len(wave) + 1024)
	if msg != nil {
		add += msgSize([]Message{*msg})
	}
	err := db.updateOutbox(add, func(tx *bolt.Tx, ot *outboxTx) error {
		rec := r
		if msg != nil {
			m := *msg
			s, err := db.enqueueTx(tx, &m, ot)
			if err != nil {
				return err
			}
			seq, rec.Seq = s, s
		}
		eb, err := tx.CreateBucketIfNotExists(bktEvents)
		if err != nil {
			return err
		}
		wb, err := tx.CreateBucketIfNotExists(bktWaveforms)
		if err != nil {
			return err
		}
		n, err := eb.NextSequence()
		if err != nil {
			return err
		}
		k := aggKey(nil, rec.Start, n)
		v, err := encodeEvent(&rec)
		if err != nil {
			return err
		}
		if err := eb.Put(k, v); err != nil {
			return err
		}
		if wave != nil {
			if err := wb.Put(k, wave); err != nil {
				return err
			}
		}
		return db.capEvents(eb, wb, ot)
	})
	if err != nil {
		return 0, fmt.Errorf("store: event: %w", err)
	}
	return seq, nil
}

// capEvents drops the oldest waveforms beyond their share of the file and
// the oldest events beyond maxEvents, counting each.
func (db *DB) capEvents(eb, wb *bolt.Bucket, ot *outboxTx) error {
	budget := db.usable / waveShare
	total := int64(0)
	c := wb.Cursor()
	for k, v := c.Last(); k != nil; k, v = c.Prev() {
		total += int64(len(v))
	}
	for k, v := c.First(); k != nil && total > budget; k, v = c.First() {
		total -= int64(len(v))
		if err := c.Delete(); err != nil {
			return err
		}
		ot.losses[ClassEventWaveform]++
	}
	// Stats counts the committed pages only: the record PutEvent has just
	// put (always a new key) is not in it yet.
	if n := eb.Stats().KeyN + 1; n > maxEvents {
		ec := eb.Cursor()
		for k, _ := ec.First(); k != nil && n > maxEvents; k, _ = ec.First() {
			if err := ec.Delete(); err != nil {
				return err
			}
			if wb.Get(k) != nil {
				if err := wb.Delete(k); err != nil {
					return err
				}
				ot.losses[ClassEventWaveform]++
			}
			ot.losses[ClassEvent]++
			n--
		}
	}
	return nil
}

// storedKind names the stored voltage-event data the size cap may delete.
type storedKind uint8

const (
	storedWaveforms storedKind = iota + 1 // the oldest captures; their event records stay
	storedEvents                          // the oldest event records, with any capture still kept
)

// deleteStoredEvents deletes up to limit of the oldest stored waveforms or
// event records (with their waveforms) while ok holds, in one transaction,
// counting each as an event_waveform or event loss, as capEvents does.
func (db *DB) deleteStoredEvents(kind storedKind, limit int, ok func(k, v []byte) bool) (int, error) {
	var ot outboxTx
	n := 0
	err := db.update(func(tx *bolt.Tx) error {
		n, ot = 0, outboxTx{}
		eb, wb := tx.Bucket(bktEvents), tx.Bucket(bktWaveforms)
		b := wb
		if kind == storedEvents {
			b = eb
		}
		if b == nil {
			return nil
		}
		c := b.Cursor()
		for k, v := c.First(); k != nil && n < limit && ok(k, v); k, v = c.First() {
			if kind == storedEvents && wb != nil {
				if w := wb.Get(k); w != nil {
					ok(k, w) // counts the waveform's bytes as freed; it goes with its event whatever ok says
					if err := wb.Delete(k); err != nil {
						return err
					}
					ot.losses[ClassEventWaveform]++
				}
			}
			if err := c.Delete(); err != nil {
				return err
			}
			n++
			if kind == storedEvents {
				ot.losses[ClassEvent]++
			} else {
				ot.losses[ClassEventWaveform]++
			}
		}
		if n == 0 {
			return nil
		}
		return db.persistLosses(tx, &ot)
	})
	if err != nil {
		return 0, err
	}
	db.commitOutbox(&ot)
	return n, nil
}

// Events calls fn for each stored event starting in [from, to) (zero
// times are open ends), oldest first.
func (db *DB) Events(from, to time.Time, fn func(r events.Record) error) error {
	return db.view(func(tx *bolt.Tx) error {
		b := tx.Bucket(bktEvents)
		if b == nil {
			return nil
		}
		c := b.Cursor()
		var k, v []byte
		if from.IsZero() {
			k, v = c.First()
		} else {
			k, v = c.Seek(aggKey(nil, from, 0))
		}
		for ; k != nil; k, v = c.Next() {
			if !to.IsZero() && keyStart(k) >= to.UnixNano() {
				break
			}
			r, err := decodeEvent(v)
			if err != nil {
				return err
			}
			if err := fn(r); err != nil {
				return err
			}
		}
		return nil
	})
}

// ErrNoEvent reports an event id that is not in the store.
var ErrNoEvent = errors.New("store: no such event")

// ErrNoWaveform reports an event whose waveform was not kept (dropped by
// the cap, or never captured).
var ErrNoWaveform = errors.New("store: the event's waveform is not kept")

// Event returns the event with the given id and its encoded waveform (see
// DecodeWaveform; nil with ErrNoWaveform when it was not kept). The bytes
// are a copy. The id names the kind and the start to the microsecond, so
// the lookup seeks to that microsecond's keys and decodes only those.
func (db *DB) Event(id string) (events.Record, []byte, error) {
	var rec events.Record
	var wave []byte
	found := false
	_, start, ok := events.ParseID(id)
	if !ok {
		return rec, nil, fmt.Errorf("%w: %q (an id is KIND-YYYYMMDDTHHMMSS.ffffffZ, as gridloupe events lists it)", ErrNoEvent, id)
	}
	err := db.view(func(tx *bolt.Tx) error {
		b := tx.Bucket(bktEvents)
		if b == nil {
			return nil
		}
		end := start.Add(time.Microsecond).UnixNano()
		c := b.Cursor()
		for k, v := c.Seek(aggKey(nil, start, 0)); k != nil && keyStart(k) < end; k, v = c.Next() {
			r, err := decodeEvent(v)
			if err != nil {
				return err
			}
			if r.ID != id {
				continue
			}
			found, rec = true, r
			if wb := tx.Bucket(bktWaveforms); wb != nil {
				if w := wb.Get(k); w != nil {
					wave = append([]byte(nil), w...)
				}
			}
			return nil
		}
		return nil
	})
	switch {
	case err != nil:
		return rec, nil, err
	case !found:
		return rec, nil, fmt.Errorf("%w: %q", ErrNoEvent, id)
	case wave == nil:
		return rec, nil, fmt.Errorf("event %q: %w", id, ErrNoWaveform)
	}
	return rec, wave, nil
}
