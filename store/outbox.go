package store

import (
	"encoding/binary"
	"encoding/json"
	"errors"
	"fmt"
	"time"

	bolt "go.etcd.io/bbolt"
	berrors "go.etcd.io/bbolt/errors"

	"github.com/gridloupe/gridloupe/metrics"
)

// Class is an outbox message class; it decides what a cap drops first
// (see sacrifice) and how much of the file its queue may fill (classShare).
type Class uint8

// Message classes. The numbers are only in memory (buckets and counters are
// stored under the names), so a class may be added anywhere before
// numClasses.
const (
	ClassTelemetry       Class = iota // 3 s telemetry (the finest level published)
	ClassEventWaveform                // an event's waveform
	ClassEvent                        // an event's summary
	ClassAlarm                        // alarm transitions: given up last
	ClassTelemetryCoarse              // 10 min and 2 h telemetry
	ClassSummary                      // small retained summaries: each supersedes the one before
	numClasses
)

var classNames = [...]string{"telemetry", "event_waveform", "event", "alarm", "telemetry_coarse", "summary"}

// classShare is the most of the usable file (see usableBytes) each class's
// queue may hold; the oldest messages beyond it are dropped and counted as
// they are queued. The shares leave well over half the file to the records.
// Alarms have none: they go only when the whole file is full (sacrifice).
var classShare = [numClasses]float64{
	ClassTelemetry:       0.10,
	ClassEventWaveform:   0.10,
	ClassEvent:           0.03,
	ClassTelemetryCoarse: 0.05,
	ClassSummary:         0.01,
}

// String returns the class name used in loss counters.
func (c Class) String() string {
	if c < numClasses {
		return classNames[c]
	}
	return "invalid"
}

func classBucket(c Class) []byte { return []byte("outbox_" + c.String()) }

func lossKey(c Class) []byte { return []byte("loss_" + c.String()) }

func lostRecordsKey(l metrics.Interval) []byte { return []byte("lost_records_" + l.String()) }

// maxTopicLen is MQTT's limit on a topic's UTF-8 length.
const maxTopicLen = 65535

// Message is one queued MQTT publication.
type Message struct {
	Seq     uint64 // assigned by Enqueue/CommitAlarm; ignored on input
	Class   Class
	Topic   string
	Payload []byte
	QoS     byte // 0, 1 or 2
	Retain  bool
	Queued  time.Time // when it was queued; zero = Options.Clock
}

// AlarmState is one alarm's persisted state.
type AlarmState struct {
	Name         string
	Raised       bool
	Since        time.Time // sample time of the last transition
	Value        float64   // the last metric value evaluated (at the transition for CommitAlarm); NaN = null
	Severity     string
	Pending      bool      // a transition waits for its on/off delay
	PendingSince time.Time // sample time the pending transition started
	Seq          uint64    // outbox seq of the last transition message (set by CommitAlarm)
	Baseline     []byte    // a baseline rule's learned commissioning baseline, JSON the caller defines; nil = none
}

type alarmJSON struct {
	Name         string          `json:"name"`
	Raised       bool            `json:"raised"`
	Since        time.Time       `json:"since"`
	Value        *float64        `json:"value"`
	Severity     string          `json:"severity,omitempty"`
	Pending      bool            `json:"pending"`
	PendingSince time.Time       `json:"pending_since"`
	Seq          uint64          `json:"seq"`
	Baseline     json.RawMessage `json:"baseline,omitempty"`
}

func marshalAlarm(st AlarmState) ([]byte, error) {
	a := alarmJSON{Name: st.Name, Raised: st.Raised, Since: st.Since, Severity: st.Severity,
		Pending: st.Pending, PendingSince: st.PendingSince, Seq: st.Seq, Baseline: st.Baseline}
	if st.Value == st.Value {
		v := st.Value
		a.Value = &v
	}
	return json.Marshal(a)
}

func encodeMessage(dst []byte, m *Message) ([]byte, error) {
	switch {
	case m.Class >= numClasses:
		return dst, fmt.Errorf("class %d: %w", m.Class, ErrBadMessage)
	case m.Topic == "" || len(m.Topic) > maxTopicLen:
		return dst, fmt.Errorf("topic of %d bytes: %w", len(m.Topic), ErrBadMessage)
	case m.QoS > 2:
		return dst, fmt.Errorf("qos %d: %w", m.QoS, ErrBadMessage)
	}
	var retain byte
	if m.Retain {
		retain = 1
	}
	dst = append(dst, m.QoS, retain)
	dst = be.AppendUint64(dst, uint64(m.Queued.UnixNano()))
	dst = binary.AppendUvarint(dst, uint64(len(m.Topic)))
	dst = append(dst, m.Topic...)
	return append(dst, m.Payload...), nil
}

func decodeMessage(seq uint64, c Class, v []byte) (Message, error) {
	m := Message{Seq: seq, Class: c}
	if len(v) < 10 {
		return m, fmt.Errorf("message %d: %w", seq, ErrCorrupt)
	}
	m.QoS, m.Retain = v[0], v[1] == 1
	m.Queued = unixNano(int64(be.Uint64(v[2:10])))
	n, k := binary.Uvarint(v[10:])
	if k <= 0 || n > uint64(len(v)-10-k) {
		return m, fmt.Errorf("message %d topic: %w", seq, ErrCorrupt)
	}
	p := v[10+k:]
	m.Topic = string(p[:n])
	m.Payload = append([]byte(nil), p[n:]...) // copy: v dies with the transaction
	return m, nil
}

// outboxTx collects one transaction's changes to the outbox and the loss
// counters, applied to memory on commit.
type outboxTx struct {
	added      [numClasses]int
	addedBytes [numClasses]int64
	losses     [numClasses]uint64
	lostRecs   [len(levels)]uint64
	persisted  bool // persistLosses ran: the counters in memory are on disk with this commit
}

// entryBytes is what one key and value take in a leaf page, roughly.
func entryBytes(k, v []byte) int64 { return int64(len(k) + len(v) + leafElemOverhead) }

// enqueueTx stores m under a new sequence number.
func (db *DB) enqueueTx(tx *bolt.Tx, m *Message, ot *outboxTx) (uint64, error) {
	if m.Queued.IsZero() {
		m.Queued = db.opts.Clock()
	}
	v, err := encodeMessage(nil, m)
	if err != nil {
		return 0, err
	}
	seq, err := tx.Bucket(bktMsgSeq).NextSequence()
	if err != nil {
		return 0, err
	}
	b := tx.Bucket(classBucket(m.Class))
	b.FillPercent = fillPercent
	k := be.AppendUint64(nil, seq)
	if err := b.Put(k, v); err != nil {
		return 0, err
	}
	ot.added[m.Class]++
	ot.addedBytes[m.Class] += entryBytes(k, v)
	return seq, nil
}

// enqueueAll stores msgs under new sequence numbers, written to seqs.
func (db *DB) enqueueAll(tx *bolt.Tx, msgs []Message, seqs []uint64, ot *outboxTx) error {
	for i := range msgs {
		m := msgs[i]
		seq, err := db.enqueueTx(tx, &m, ot)
		if err != nil {
			return fmt.Errorf("message %d: %w", i, err)
		}
		seqs[i] = seq
	}
	return nil
}

// capTx applies the per-class caps inside tx: the byte share of the usable
// file (classShare) and any message-count cap (OutboxCaps). Alarms are not
// capped. It then persists the loss counters.
func (db *DB) capTx(tx *bolt.Tx, ot *outboxTx) error {
	db.mu.Lock()
	caps, have, haveBytes := db.caps, db.outboxN, db.outboxBytes
	db.mu.Unlock()
	for c := range numClasses {
		if c == ClassAlarm {
			continue
		}
		over := 0
		if limit, ok := caps[c]; ok && limit > 0 {
			over = max(over, have[c]+ot.added[c]-limit)
		}
		byteCap := int64(classShare[c] * float64(db.usable))
		excess := haveBytes[c] + ot.addedBytes[c] - byteCap
		if over <= 0 && (byteCap <= 0 || excess <= 0) {
			continue
		}
		freed := int64(0)
		n, err := dropTx(tx, c, maxInt32, func(k, v []byte) bool {
			if over > 0 {
				over--
				freed += entryBytes(k, v)
				return true
			}
			if byteCap > 0 && freed < excess {
				freed += entryBytes(k, v)
				return true
			}
			return false
		}, ot)
		if err != nil {
			return err
		}
		_ = n
	}
	return db.persistLosses(tx, ot)
}

const maxInt32 = 1<<31 - 1

// dropTx deletes up to limit of class c's oldest messages while ok holds
// (nil = always), counting them in ot as losses.
func dropTx(tx *bolt.Tx, c Class, limit int, ok func(k, v []byte) bool, ot *outboxTx) (int, error) {
	cur := tx.Bucket(classBucket(c)).Cursor()
	n := 0
	for k, v := cur.First(); k != nil && n < limit && (ok == nil || ok(k, v)); k, v = cur.First() {
		ot.addedBytes[c] -= entryBytes(k, v)
		if err := cur.Delete(); err != nil {
			return n, err
		}
		n++
	}
	ot.added[c] -= n
	ot.losses[c] += uint64(n)
	return n, nil
}

// persistLosses writes the loss counters when this transaction changes
// them or earlier changes (NoteUnstored) wait to be written.
func (db *DB) persistLosses(tx *bolt.Tx, ot *outboxTx) error {
	db.mu.Lock()
	cur, recs, dirty := db.losses, db.lostRecs, db.lossDirty
	db.mu.Unlock()
	meta := tx.Bucket(bktMeta)
	for c := range numClasses {
		if ot.losses[c] == 0 && !dirty {
			continue
		}
		if err := meta.Put(lossKey(c), be.AppendUint64(nil, cur[c]+ot.losses[c])); err != nil {
			return err
		}
	}
	for i, l := range levels {
		if ot.lostRecs[i] == 0 && !dirty {
			continue
		}
		if err := meta.Put(lostRecordsKey(l), be.AppendUint64(nil, recs[i]+ot.lostRecs[i])); err != nil {
			return err
		}
	}
	ot.persisted = true
	return nil
}

// commitOutbox applies a committed transaction's changes to memory.
func (db *DB) commitOutbox(ot *outboxTx) {
	db.mu.Lock()
	defer db.mu.Unlock()
	for c := range numClasses {
		db.outboxN[c] += ot.added[c]
		db.outboxBytes[c] = max(0, db.outboxBytes[c]+ot.addedBytes[c])
		db.losses[c] += ot.losses[c]
	}
	for i := range levels {
		db.lostRecs[i] += ot.lostRecs[i]
	}
	if ot.persisted {
		db.lossDirty = false
	}
}

// dropOldest drops class c's oldest messages (counted as losses) in one transaction.
func (db *DB) dropOldest(c Class, limit int, ok func(k, v []byte) bool) (int, error) {
	var ot outboxTx
	n := 0
	err := db.update(func(tx *bolt.Tx) error {
		ot = outboxTx{}
		var err error
		if n, err = dropTx(tx, c, limit, ok, &ot); err != nil {
			return err
		}
		return db.persistLosses(tx, &ot)
	})
	if err != nil {
		return 0, err
	}
	db.commitOutbox(&ot)
	return n, nil
}

// NoteUnstored counts records and messages that were given up because a
// write failed (a full card, a damaged file): they are losses like those of
// the cap, counted at once in Losses and LostRecords and persisted with the
// next write that succeeds.
func (db *DB) NoteUnstored(recs []*metrics.Record, msgs []Message) {
	db.wmu.Lock() // not between a write's snapshot of the counters and its commit
	defer db.wmu.Unlock()
	db.mu.Lock()
	defer db.mu.Unlock()
	for _, r := range recs {
		if r != nil && r.Interval >= metrics.Int3s && int(r.Interval-metrics.Int3s) < len(levels) {
			db.lostRecs[r.Interval-metrics.Int3s]++
			db.lossDirty = true
		}
	}
	for i := range msgs {
		if msgs[i].Class < numClasses {
			db.losses[msgs[i].Class]++
			db.lossDirty = true
		}
	}
}

// LostRecords returns the persisted count of records given up per level:
// deleted by the size cap before their retention ended, or never stored
// because a write failed. Retention's deletions are not losses.
func (db *DB) LostRecords() map[metrics.Interval]uint64 {
	db.mu.Lock()
	defer db.mu.Unlock()
	out := make(map[metrics.Interval]uint64, len(levels))
	for i, l := range levels {
		out[l] = db.lostRecs[i]
	}
	return out
}

// updateOutbox runs fn in one write transaction, retrying once after a trim
// when the size cap stops it. The caller holds wmu.
func (db *DB) updateOutbox(add int64, fn func(tx *bolt.Tx, ot *outboxTx) error) error {
	if err := db.makeRoom(add); err != nil {
		return err
	}
	var ot outboxTx
	run := func(tx *bolt.Tx) error {
		ot = outboxTx{}
		if err := fn(tx, &ot); err != nil {
			return err
		}
		return db.capTx(tx, &ot)
	}
	err := db.update(run)
	if errors.Is(err, berrors.ErrMaxSizeReached) {
		if terr := db.trim(int64(trimLow*float64(db.usable)) - add); terr != nil {
			return errors.Join(err, terr)
		}
		err = db.update(run)
	}
	if err != nil {
		return err
	}
	db.commitOutbox(&ot)
	return nil
}

func msgSize(msgs []Message) int64 {
	n := int64(0)
	for i := range msgs {
		n += int64(len(msgs[i].Topic) + len(msgs[i].Payload) + 8 + 20 + leafElemOverhead)
	}
	return n
}

// Enqueue queues messages in one transaction and returns their sequence
// numbers, taken from a persisted counter that is never reused. Class caps
// (OutboxCaps) are applied in the same transaction.
func (db *DB) Enqueue(msgs ...Message) ([]uint64, error) {
	if len(msgs) == 0 {
		return nil, nil
	}
	if err := db.beginWrite(); err != nil {
		return nil, err
	}
	defer db.wmu.Unlock()
	seqs := make([]uint64, len(msgs))
	err := db.updateOutbox(msgSize(msgs), func(tx *bolt.Tx, ot *outboxTx) error {
		return db.enqueueAll(tx, msgs, seqs, ot)
	})
	if err != nil {
		return nil, fmt.Errorf("store: enqueue: %w", err)
	}
	return seqs, nil
}

// CommitAlarm stores an alarm transition and its outbox message in one
// transaction, committed (and synced) at once. st.Seq is set to the
// message's sequence number, which is returned.
func (db *DB) CommitAlarm(st AlarmState, msg Message) (uint64, error) {
	if err := db.beginWrite(); err != nil {
		return 0, err
	}
	defer db.wmu.Unlock()
	var seq uint64
	err := db.updateOutbox(msgSize([]Message{msg})+256, func(tx *bolt.Tx, ot *outboxTx) error {
		var err error
		if seq, err = db.enqueueTx(tx, &msg, ot); err != nil {
			return err
		}
		st.Seq = seq
		return putAlarm(tx, st)
	})
	if err != nil {
		return 0, fmt.Errorf("store: commit alarm %q: %w", st.Name, err)
	}
	return seq, nil
}

// SetAlarmState stores an alarm's state without a message (a pending delay
// starting or ending).
func (db *DB) SetAlarmState(st AlarmState) error {
	if err := db.beginWrite(); err != nil {
		return err
	}
	defer db.wmu.Unlock()
	if err := db.update(func(tx *bolt.Tx) error { return putAlarm(tx, st) }); err != nil {
		return fmt.Errorf("store: alarm state %q: %w", st.Name, err)
	}
	return nil
}

func putAlarm(tx *bolt.Tx, st AlarmState) error {
	v, err := marshalAlarm(st)
	if err != nil {
		return fmt.Errorf("encode alarm state: %w", err)
	}
	if err := tx.Bucket(bktAlarms).Put([]byte(st.Name), v); err != nil {
		return fmt.Errorf("alarm state: %w", err)
	}
	return nil
}

// AlarmStates returns every stored alarm state by name.
func (db *DB) AlarmStates() (map[string]AlarmState, error) {
	out := map[string]AlarmState{}
	err := db.view(func(tx *bolt.Tx) error {
		b := tx.Bucket(bktAlarms)
		if b == nil {
			return nil
		}
		return b.ForEach(func(k, v []byte) error {
			var a alarmJSON
			if err := json.Unmarshal(v, &a); err != nil {
				return fmt.Errorf("alarm %q: %w: %w", k, ErrCorrupt, err)
			}
			st := AlarmState{Name: a.Name, Raised: a.Raised, Since: a.Since, Severity: a.Severity,
				Pending: a.Pending, PendingSince: a.PendingSince, Seq: a.Seq, Value: nan(), Baseline: a.Baseline}
			if a.Value != nil {
				st.Value = *a.Value
			}
			out[st.Name] = st
			return nil
		})
	})
	if err != nil {
		return nil, fmt.Errorf("store: alarm states: %w", err)
	}
	return out, nil
}

// Pending returns up to limit queued messages with seq > after, in seq order.
// Payloads are copies.
func (db *DB) Pending(after uint64, limit int) ([]Message, error) {
	if limit <= 0 {
		return nil, nil
	}
	var out []Message
	err := db.view(func(tx *bolt.Tx) error {
		var (
			curs  [numClasses]*bolt.Cursor
			keys  [numClasses][]byte
			vals  [numClasses][]byte
			start = be.AppendUint64(nil, after+1)
		)
		if after == ^uint64(0) {
			return nil
		}
		for c := range numClasses {
			if b := tx.Bucket(classBucket(c)); b != nil {
				curs[c] = b.Cursor()
				keys[c], vals[c] = curs[c].Seek(start)
			}
		}
		for len(out) < limit {
			best := -1
			for c := range keys {
				if keys[c] != nil && (best < 0 || be.Uint64(keys[c]) < be.Uint64(keys[best])) {
					best = c
				}
			}
			if best < 0 {
				return nil
			}
			if len(keys[best]) != 8 {
				return fmt.Errorf("outbox key %x: %w", keys[best], ErrCorrupt)
			}
			m, err := decodeMessage(be.Uint64(keys[best]), Class(best), vals[best])
			if err != nil {
				return err
			}
			out = append(out, m)
			keys[best], vals[best] = curs[best].Next()
		}
		return nil
	})
	if err != nil {
		return nil, fmt.Errorf("store: pending: %w", err)
	}
	return out, nil
}

// Ack deletes acknowledged messages. Unknown sequence numbers are ignored.
func (db *DB) Ack(seqs ...uint64) error {
	if len(seqs) == 0 {
		return nil
	}
	if err := db.beginWrite(); err != nil {
		return err
	}
	defer db.wmu.Unlock()
	var ot outboxTx
	err := db.update(func(tx *bolt.Tx) error {
		ot = outboxTx{}
		for _, s := range seqs {
			k := be.AppendUint64(nil, s)
			for c := range numClasses {
				b := tx.Bucket(classBucket(c))
				v := b.Get(k)
				if v == nil {
					continue
				}
				ot.addedBytes[c] -= entryBytes(k, v)
				if err := b.Delete(k); err != nil {
					return err
				}
				ot.added[c]--
				break
			}
		}
		return nil
	})
	if err != nil {
		return fmt.Errorf("store: ack: %w", err)
	}
	db.commitOutbox(&ot)
	return nil
}

// OutboxCaps sets the most messages kept per class (absent or ≤ 0 = no
// count cap), on top of each class's byte share of the file (classShare),
// which always applies. The next Enqueue drops the oldest messages of a
// class over its cap and counts them as losses. Alarms are never dropped by
// a class cap, only when the whole store reaches MaxSizeMB.
func (db *DB) OutboxCaps(caps map[Class]int) {
	c := make(map[Class]int, len(caps))
	for k, v := range caps {
		c[k] = v
	}
	db.mu.Lock()
	db.caps = c
	db.mu.Unlock()
}

// Losses returns the persisted count of dropped messages per class.
func (db *DB) Losses() map[Class]uint64 {
	db.mu.Lock()
	defer db.mu.Unlock()
	out := make(map[Class]uint64, numClasses)
	for c := range numClasses {
		out[c] = db.losses[c]
	}
	return out
}
