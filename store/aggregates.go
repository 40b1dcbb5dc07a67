package store

import (
	"bytes"
	"fmt"
	"math"
	"time"

	bolt "go.etcd.io/bbolt"

	"github.com/gridloupe/gridloupe/metrics"
)

// maxDeletesPerTx bounds one retention transaction's dirty pages.
const maxDeletesPerTx = 20000

// maxTrimRounds bounds the delete-and-measure loop of a size trim.
const maxTrimRounds = 16

// leafElemOverhead is bbolt's per-key header in a leaf page (flags, pos, ksize, vsize).
const leafElemOverhead = 16

func unixNano(n int64) time.Time { return time.Unix(0, n).UTC() }

func aggKey(dst []byte, start time.Time, seq uint64) []byte {
	dst = be.AppendUint64(dst, uint64(start.UnixNano()))
	return be.AppendUint64(dst, seq)
}

// keyStart returns the start (UnixNano) in an aggregate key.
func keyStart(k []byte) int64 { return int64(be.Uint64(k[:8])) }

// SetLayout stores s as the layout of the records written from now on. A
// layout equal to one stored before gets that one's id back; records written
// under older layouts stay decodable.
func (db *DB) SetLayout(s *metrics.Setup) error {
	enc, err := marshalLayout(s)
	if err != nil {
		return err
	}
	if err := db.beginWrite(); err != nil {
		return err
	}
	defer db.wmu.Unlock()
	var id uint16
	err = db.update(func(tx *bolt.Tx) error {
		lb := tx.Bucket(bktLayouts)
		var found bool
		var maxID uint16
		c := lb.Cursor()
		for k, v := c.First(); k != nil; k, v = c.Next() {
			kid := be.Uint16(k)
			maxID = max(maxID, kid)
			if bytes.Equal(v, enc) {
				id, found = kid, true
			}
		}
		if !found {
			if maxID == math.MaxUint16 {
				return fmt.Errorf("no layout id left: %w", ErrBadLayout)
			}
			id = maxID + 1
			if err := lb.Put(be.AppendUint16(nil, id), enc); err != nil {
				return err
			}
		}
		return tx.Bucket(bktMeta).Put(keyCurLay, be.AppendUint16(nil, id))
	})
	if err != nil {
		return fmt.Errorf("store: set layout: %w", err)
	}
	db.mu.Lock()
	db.layouts[id] = cloneSetup(s)
	db.curID = id
	db.mu.Unlock()
	return nil
}

// Layout returns a copy of the current record layout, or ErrNoLayout.
func (db *DB) Layout() (*metrics.Setup, error) {
	db.mu.Lock()
	defer db.mu.Unlock()
	if db.closed {
		return nil, ErrClosed
	}
	s := db.layouts[db.curID]
	if s == nil {
		return nil, ErrNoLayout
	}
	return cloneSetup(s), nil
}

func (db *DB) layoutByID(id uint16) *metrics.Setup {
	db.mu.Lock()
	defer db.mu.Unlock()
	return db.layouts[id]
}

// PutAggregates stores a batch of records in one transaction; it is
// PutBatch without messages.
func (db *DB) PutAggregates(recs []*metrics.Record) error {
	_, err := db.PutBatch(recs, nil)
	return err
}

// PutBatch stores a batch of records and queues msgs (their telemetry, for
// one) in ONE transaction, so that after a crash the file holds both or
// neither: no stored record lacks its queued message. Each record goes to
// its level's bucket under (start, new sequence number), so no record ever
// replaces another; messages get their sequence numbers as in Enqueue,
// which are returned. When the file's in-use space would pass 90 % of what
// MaxSizeMB allows, the oldest data goes first in the documented order
// (see sacrifice).
func (db *DB) PutBatch(recs []*metrics.Record, msgs []Message) ([]uint64, error) {
	if len(recs) == 0 && len(msgs) == 0 {
		return nil, nil
	}
	if err := db.beginWrite(); err != nil {
		return nil, err
	}
	defer db.wmu.Unlock()
	db.mu.Lock()
	lid, s := db.curID, db.layouts[db.curID]
	db.mu.Unlock()
	if s == nil && len(recs) > 0 {
		return nil, ErrNoLayout
	}
	ends := make([]int, len(recs))
	buf := db.buf[:0]
	for i, r := range recs {
		if r == nil {
			return nil, fmt.Errorf("store: record %d is nil: %w", i, ErrBadRecord)
		}
		if _, err := levelBucket(r.Interval); err != nil {
			return nil, fmt.Errorf("store: record %d: %w", i, err)
		}
		if r.Start.UnixNano() < 0 {
			return nil, fmt.Errorf("store: record %d: start %s before 1970: %w", i, r.Start.UTC().Format(time.RFC3339), ErrBadRecord)
		}
		var err error
		if buf, err = encodeRec(buf, r, lid, s, r.Interval == metrics.Int3s); err != nil {
			return nil, fmt.Errorf("store: record %d (%s %s): %w", i, r.Interval, r.Start.UTC().Format(time.RFC3339Nano), err)
		}
		ends[i] = len(buf)
	}
	db.buf = buf
	add := int64(len(buf)+len(recs)*(16+leafElemOverhead)) + msgSize(msgs)
	keys := make([]byte, 0, 16*len(recs))
	seqs := make([]uint64, len(msgs))
	err := db.updateOutbox(add, func(tx *bolt.Tx, ot *outboxTx) error {
		keys = keys[:0]
		meta := tx.Bucket(bktMeta)
		var bk [len(levels) + 1]*bolt.Bucket
		begin := 0
		for i, r := range recs {
			b := bk[r.Interval-metrics.Int3s]
			if b == nil {
				b = tx.Bucket([]byte(r.Interval.String()))
				b.FillPercent = fillPercent
				bk[r.Interval-metrics.Int3s] = b
			}
			seq, err := meta.NextSequence()
			if err != nil {
				return err
			}
			keys = aggKey(keys, r.Start, seq)
			if err := b.Put(keys[len(keys)-16:], buf[begin:ends[i]]); err != nil {
				return err
			}
			begin = ends[i]
		}
		if db.hookMidBatch != nil {
			db.hookMidBatch()
		}
		return db.enqueueAll(tx, msgs, seqs, ot)
	})
	if err != nil {
		return nil, fmt.Errorf("store: put %d records and %d messages: %w", len(recs), len(msgs), err)
	}
	if now := time.Now(); now.Sub(db.lastRelease) >= db.releaseEvery || now.Before(db.lastRelease) {
		db.lastRelease = now
		db.releaseMapped()
	}
	db.mu.Lock()
	for _, r := range recs {
		db.counts[r.Interval]++
	}
	db.mu.Unlock()
	return seqs, nil
}

// maxNanoTime is the last instant UnixNano represents (year 2262); bounds
// beyond it are treated as open.
var maxNanoTime = time.Unix(0, math.MaxInt64)

// queryPage is how many records Query decodes per read transaction: fn
// runs outside the transaction, so a slow consumer (an export piped into
// a pager) never holds one open while the writer needs to grow the map.
const queryPage = 256

// Query calls fn for each record of level iv whose start lies in [from, to),
// in key order (start time, then sequence). A zero to means no upper bound.
// fn receives a fresh Record it may keep; an error from fn stops the query
// and is returned as is. Records are read in pages of queryPage per read
// transaction and fn is called between transactions; records written
// meanwhile after the current position are included.
func (db *DB) Query(iv metrics.Interval, from, to time.Time, fn func(r *metrics.Record) error) error {
	name, err := levelBucket(iv)
	if err != nil {
		return fmt.Errorf("store: query: %w", err)
	}
	var seek [16]byte
	if n := from.UnixNano(); n > 0 {
		be.PutUint64(seek[:8], uint64(n))
	}
	end := int64(math.MaxInt64)
	if !to.IsZero() && to.Before(maxNanoTime) {
		end = to.UnixNano()
	}
	if from.After(maxNanoTime) {
		return nil
	}
	page := make([]*metrics.Record, 0, queryPage)
	var last [16]byte
	started := false
	for {
		page = page[:0]
		more := false
		err = db.view(func(tx *bolt.Tx) error {
			b := tx.Bucket(name)
			if b == nil {
				return nil
			}
			c := b.Cursor()
			k, v := c.Seek(seek[:])
			if started && len(k) == 16 && bytes.Equal(k, last[:]) {
				k, v = c.Next() // resume after the last record delivered
			}
			for ; len(k) == 16 && keyStart(k) < end; k, v = c.Next() {
				if len(page) == queryPage {
					more = true
					return nil
				}
				r, err := db.decode(v, iv)
				if err != nil {
					return fmt.Errorf("key %x: %w", k, err)
				}
				page = append(page, r)
				copy(last[:], k)
			}
			return nil
		})
		if err != nil {
			return fmt.Errorf("store: query %s: %w", iv, err)
		}
		for _, r := range page {
			if err := fn(r); err != nil {
				return err
			}
		}
		if !more {
			return nil
		}
		seek, started = last, true
	}
}

func (db *DB) decode(v []byte, iv metrics.Interval) (*metrics.Record, error) {
	lid, err := recordLayoutID(v)
	if err != nil {
		return nil, err
	}
	s := db.layoutByID(lid)
	if s == nil {
		return nil, fmt.Errorf("unknown layout %d: %w", lid, ErrCorrupt)
	}
	return decodeRecord(v, iv, s)
}

// Last returns up to n newest records of level iv (by key), oldest first.
func (db *DB) Last(iv metrics.Interval, n int) ([]*metrics.Record, error) {
	name, err := levelBucket(iv)
	if err != nil {
		return nil, fmt.Errorf("store: last: %w", err)
	}
	if n <= 0 {
		return nil, nil
	}
	var out []*metrics.Record
	err = db.view(func(tx *bolt.Tx) error {
		b := tx.Bucket(name)
		if b == nil {
			return nil
		}
		c := b.Cursor()
		for k, v := c.Last(); k != nil && len(out) < n; k, v = c.Prev() {
			r, err := db.decode(v, iv)
			if err != nil {
				return fmt.Errorf("key %x: %w", k, err)
			}
			out = append(out, r)
		}
		return nil
	})
	if err != nil {
		return nil, fmt.Errorf("store: last %s: %w", iv, err)
	}
	for i, j := 0, len(out)-1; i < j; i, j = i+1, j-1 {
		out[i], out[j] = out[j], out[i]
	}
	return out, nil
}

// Prune applies retention (records whose start is older than now minus the
// level's retention are deleted) and the size cap: when the in-use pages pass
// 90 % of the space MaxSizeMB allows, the oldest records of the finest level
// (3s, then 10min, then 2h) are deleted until 80 % is in use, so bbolt reuses
// the freed pages and the file stops growing. A zero now means Options.Clock.
// It returns how many records (and, under the cap, outbox messages) it deleted.
func (db *DB) Prune(now time.Time) (deleted int, err error) {
	if now.IsZero() {
		now = db.opts.Clock()
	}
	if err := db.beginWrite(); err != nil {
		return 0, err
	}
	defer db.wmu.Unlock()
	for _, l := range levels {
		d := db.opts.Retention[l]
		if d <= 0 {
			continue
		}
		cutoff := now.Add(-d).UnixNano()
		for {
			n, err := db.deleteOldest(l, maxDeletesPerTx, func(k, _ []byte) bool { return keyStart(k) < cutoff }, false)
			deleted += n
			if err != nil {
				return deleted, fmt.Errorf("store: prune %s: %w", l, err)
			}
			if n < maxDeletesPerTx {
				break
			}
		}
	}
	before := db.totalCount()
	if err := db.makeRoom(0); err != nil {
		return deleted, err
	}
	return deleted + max(0, before-db.totalCount()), nil
}

func (db *DB) totalCount() int {
	db.mu.Lock()
	defer db.mu.Unlock()
	n := 0
	for _, c := range db.counts {
		n += c
	}
	for _, c := range db.outboxN {
		n += c
	}
	return n
}

// deleteOldest deletes up to limit records of level l from the oldest while
// ok(k, v) holds, in one transaction. With lost (the size cap), they are
// counted and persisted as lost records; retention's deletions are not.
func (db *DB) deleteOldest(l metrics.Interval, limit int, ok func(k, v []byte) bool, lost bool) (int, error) {
	n := 0
	var ot outboxTx
	err := db.update(func(tx *bolt.Tx) error {
		n, ot = 0, outboxTx{}
		c := tx.Bucket([]byte(l.String())).Cursor()
		for k, v := c.First(); k != nil && n < limit && ok(k, v); k, v = c.First() {
			if err := c.Delete(); err != nil {
				return err
			}
			n++
		}
		if !lost {
			return nil
		}
		ot.lostRecs[l-metrics.Int3s] = uint64(n)
		return db.persistLosses(tx, &ot)
	})
	if err != nil {
		return 0, err
	}
	db.commitOutbox(&ot)
	db.mu.Lock()
	db.counts[l] -= n
	db.mu.Unlock()
	return n, nil
}

// inUse returns the high-water mark minus free and pending pages, in bytes.
func (db *DB) inUse() int64 {
	bs := db.bdb.Stats()
	var hwm int64
	_ = db.bdb.View(func(tx *bolt.Tx) error { hwm = tx.Size(); return nil })
	return hwm - int64(bs.FreePageN+bs.PendingPageN)*db.pageSize
}

// makeRoom trims when in-use space plus add would pass the high mark.
// The caller holds wmu.
func (db *DB) makeRoom(add int64) error {
	if db.inUse()+add <= int64(trimHigh*float64(db.usable)) {
		return nil
	}
	return db.trim(int64(trimLow*float64(db.usable)) - add)
}

// victim is one kind of data the size cap may delete: an outbox class's
// messages, or a level's records.
type victim struct {
	class  Class
	level  metrics.Interval // 0 = the class (or stored)
	stored storedKind       // stored voltage-event data rather than a queue; 0 = none
}

// sacrifice is the order in which the size cap gives data up (README, The
// store): queued 3 s telemetry (and superseded summaries), then queued
// 10 min and 2 h telemetry and event waveforms, then the oldest 3 s records,
// then events, and last the 10 min and 2 h history and the alarm messages.
// Event waveforms and events are both the queued messages and the stored
// captures and records (events.go), the stored ones after the queued.
var sacrifice = [...]victim{
	{class: ClassSummary}, {class: ClassTelemetry},
	{class: ClassTelemetryCoarse}, {class: ClassEventWaveform}, {stored: storedWaveforms},
	{level: metrics.Int3s},
	{class: ClassEvent}, {stored: storedEvents},
	{level: metrics.Int10min}, {level: metrics.Int2h},
	{class: ClassAlarm},
}

// trim deletes the oldest data in the order of sacrifice until the in-use
// space is at most target bytes; every record and message deleted is
// counted and persisted as a loss. The caller holds wmu.
func (db *DB) trim(target int64) error {
	target = max(target, 0)
	db.mu.Lock()
	db.capTrims++
	db.mu.Unlock()
	ps := db.pageSize
	for range maxTrimRounds {
		cur := db.inUse()
		if cur <= target {
			return nil
		}
		need := cur - target
		freed := int64(0)
		deleted := 0
		est := func(k, v []byte) bool {
			if freed >= need {
				return false
			}
			fp := int64(len(k) + len(v) + leafElemOverhead)
			if fp > ps/2 { // a value this large sits on its own overflow run
				fp = (fp + 16 + ps - 1) / ps * ps
			}
			freed += int64(float64(fp) / fillPercent)
			return true
		}
		// In order; a victim that hit the per-transaction limit ends the
		// round, so a later one is only touched once the earlier ones are empty.
		for _, v := range sacrifice {
			var n int
			var err error
			switch {
			case v.stored != 0:
				n, err = db.deleteStoredEvents(v.stored, maxDeletesPerTx, est)
			case v.level != 0:
				n, err = db.deleteOldest(v.level, maxDeletesPerTx, est, true)
			default:
				n, err = db.dropOldest(v.class, maxDeletesPerTx, est)
			}
			deleted += n
			if err != nil {
				return fmt.Errorf("store: trim: %w", err)
			}
			if n == maxDeletesPerTx || freed >= need {
				break
			}
		}
		if deleted > 0 {
			db.log.Info("size cap: deleted oldest data", "deleted", deleted, "in_use_bytes", cur, "target_bytes", target)
		}
		if deleted == 0 {
			return fmt.Errorf("store: %d bytes in use, target %d: %w", cur, target, ErrFull)
		}
	}
	return nil
}
