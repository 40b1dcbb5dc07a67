package store

import (
	"bytes"
	"errors"
	"math"
	"path/filepath"
	"testing"
	"time"

	"github.com/gridloupe/gridloupe/metrics"
)

const topicAlarm = "gridloupe/north-weir-dc2/dc2-gw1/alarm"

func msg(c Class, payload string) Message {
	return Message{Class: c, Topic: "gridloupe/north-weir-dc2/dc2-gw1/" + c.String(), Payload: []byte(payload), QoS: 1, Queued: t0}
}

func TestOutboxSeqNeverReused(t *testing.T) {
	t.Parallel()
	path := filepath.Join(t.TempDir(), "seq.db")
	db := openTest(t, Options{Path: path})
	seqs, err := db.Enqueue(msg(ClassTelemetry, "a"), msg(ClassEvent, "b"), msg(ClassAlarm, "c"))
	if err != nil {
		t.Fatal(err)
	}
	if seqs[0] != 1 || seqs[1] != 2 || seqs[2] != 3 {
		t.Fatalf("seqs %v, want 1 2 3 (bbolt NextSequence starts at 1)", seqs)
	}
	if err := db.Ack(seqs...); err != nil {
		t.Fatal(err)
	}
	if err := db.Close(); err != nil {
		t.Fatal(err)
	}
	db = openTest(t, Options{Path: path})
	seqs, err = db.Enqueue(msg(ClassTelemetry, "d"))
	if err != nil {
		t.Fatal(err)
	}
	if seqs[0] != 4 {
		t.Errorf("seq after reopen %d, want 4 (never reused)", seqs[0])
	}
	if p, _ := db.Pending(0, 10); len(p) != 1 || p[0].Seq != 4 {
		t.Errorf("pending after ack and reopen: %+v", p)
	}
	checkBolt(t, db)
}

func TestPendingOrder(t *testing.T) {
	t.Parallel()
	db := openTest(t, Options{})
	classes := []Class{ClassEvent, ClassTelemetry, ClassAlarm, ClassTelemetry, ClassEventWaveform, ClassEvent, ClassAlarm, ClassTelemetry}
	for i, c := range classes {
		m := msg(c, string(rune('a'+i)))
		m.Retain = i%2 == 0
		if _, err := db.Enqueue(m); err != nil {
			t.Fatal(err)
		}
	}
	all, err := db.Pending(0, 100)
	if err != nil || len(all) != len(classes) {
		t.Fatalf("Pending: %d, %v", len(all), err)
	}
	for i, m := range all {
		if m.Seq != uint64(i+1) || m.Class != classes[i] || string(m.Payload) != string(rune('a'+i)) ||
			m.Retain != (i%2 == 0) || m.QoS != 1 || !m.Queued.Equal(t0) || m.Topic != "gridloupe/north-weir-dc2/dc2-gw1/"+classes[i].String() {
			t.Errorf("message %d: %+v", i, m)
		}
	}
	page, err := db.Pending(3, 2)
	if err != nil || len(page) != 2 || page[0].Seq != 4 || page[1].Seq != 5 {
		t.Fatalf("Pending(3, 2): %+v, %v", page, err)
	}
	// Payloads are copies: they survive later writes and changing them changes nothing stored.
	keep := page[0].Payload
	keep[0] = 'X'
	for range 50 {
		if _, err := db.Enqueue(msg(ClassTelemetry, "filler")); err != nil {
			t.Fatal(err)
		}
	}
	again, _ := db.Pending(3, 1)
	if !bytes.Equal(again[0].Payload, []byte("d")) || !bytes.Equal(keep, []byte("X")) {
		t.Errorf("payload not copied: stored %q, kept %q", again[0].Payload, keep)
	}
	if err := db.Ack(2, 4, 999); err != nil {
		t.Fatal(err)
	}
	rest, _ := db.Pending(0, 3)
	if len(rest) != 3 || rest[0].Seq != 1 || rest[1].Seq != 3 || rest[2].Seq != 5 {
		t.Errorf("after Ack(2, 4): %+v", rest)
	}
	if st := db.Stats(); st.Outbox[ClassTelemetry] != 51 {
		t.Errorf("telemetry queued %d, want 51", st.Outbox[ClassTelemetry])
	}
}

func TestEnqueueRejects(t *testing.T) {
	t.Parallel()
	db := openTest(t, Options{})
	cases := []struct {
		name string
		m    Message
		src  string
	}{
		{"empty topic", Message{}, "MQTT 3.1.1 §4.7.3: topic names are at least one character"},
		{"qos 3", Message{Topic: "x", QoS: 3}, "MQTT 3.1.1 §4.3: QoS 0, 1, 2"},
		{"class", Message{Topic: "x", Class: 9}, "closed set of classes"},
	}
	for _, tc := range cases {
		if _, err := db.Enqueue(msg(ClassEvent, "ok"), tc.m); !errors.Is(err, ErrBadMessage) {
			t.Errorf("%s: %v, want ErrBadMessage", tc.name, err)
		}
	}
	if p, _ := db.Pending(0, 10); len(p) != 0 {
		t.Errorf("a rejected batch left %d messages", len(p))
	}
}

func TestCommitAlarm(t *testing.T) {
	t.Parallel()
	path := filepath.Join(t.TempDir(), "alarm.db")
	db := openTest(t, Options{Path: path})
	// The message is written first inside the transaction; the state write
	// then fails (bbolt refuses an empty key), so both must roll back.
	_, err := db.CommitAlarm(AlarmState{Name: ""}, Message{Class: ClassAlarm, Topic: topicAlarm, Payload: []byte("{}")})
	if err == nil {
		t.Fatal("CommitAlarm with an empty name succeeded")
	}
	if p, _ := db.Pending(0, 10); len(p) != 0 {
		t.Errorf("message of a failed transition still queued: %+v", p)
	}
	if st := db.Stats(); st.MessageSeq != 0 || st.Outbox[ClassAlarm] != 0 {
		t.Errorf("failed transition advanced the counters: %+v", st)
	}
	since := t0.Add(20 * time.Minute)
	seq, err := db.CommitAlarm(AlarmState{Name: "current-distortion", Raised: true, Since: since, Value: 8.7, Severity: "warning"},
		Message{Class: ClassAlarm, Topic: topicAlarm, Payload: []byte(`{"name":"current-distortion"}`), QoS: 1})
	if err != nil {
		t.Fatal(err)
	}
	if err := db.SetAlarmState(AlarmState{Name: "pf-low", Pending: true, PendingSince: since, Value: math.NaN()}); err != nil {
		t.Fatal(err)
	}
	if err := db.Close(); err != nil {
		t.Fatal(err)
	}
	db = openTest(t, Options{Path: path})
	states, err := db.AlarmStates()
	if err != nil {
		t.Fatal(err)
	}
	a := states["current-distortion"]
	if !a.Raised || !a.Since.Equal(since) || a.Value != 8.7 || a.Seq != seq || a.Severity != "warning" {
		t.Errorf("state after reopen: %+v (seq %d)", a, seq)
	}
	if b := states["pf-low"]; !b.Pending || !math.IsNaN(b.Value) || b.Raised {
		t.Errorf("pending state: %+v", b)
	}
	p, _ := db.Pending(0, 10)
	if len(p) != 1 || p[0].Seq != seq || p[0].Class != ClassAlarm {
		t.Errorf("alarm message after reopen: %+v", p)
	}
	checkBolt(t, db)
}

func TestOutboxCaps(t *testing.T) {
	t.Parallel()
	path := filepath.Join(t.TempDir(), "caps.db")
	db := openTest(t, Options{Path: path})
	db.OutboxCaps(map[Class]int{ClassTelemetry: 5, ClassEvent: 3, ClassAlarm: 1})
	var batch []Message
	for i := range 10 {
		batch = append(batch, msg(ClassTelemetry, string(rune('0'+i))))
	}
	for i := range 5 {
		batch = append(batch, msg(ClassEvent, string(rune('a'+i))))
	}
	for range 4 {
		batch = append(batch, msg(ClassAlarm, "!"))
	}
	if _, err := db.Enqueue(batch...); err != nil {
		t.Fatal(err)
	}
	// One more telemetry message in a later call drops one more.
	if _, err := db.Enqueue(msg(ClassTelemetry, "z")); err != nil {
		t.Fatal(err)
	}
	want := map[Class]uint64{ClassTelemetry: 6, ClassEvent: 2, ClassEventWaveform: 0, ClassAlarm: 0}
	if got := db.Losses(); !equalLosses(got, want) {
		t.Errorf("losses %v, want %v", got, want)
	}
	p, _ := db.Pending(0, 100)
	var tel, ev string
	alarms := 0
	for _, m := range p {
		switch m.Class {
		case ClassTelemetry:
			tel += string(m.Payload)
		case ClassEvent:
			ev += string(m.Payload)
		case ClassAlarm:
			alarms++
		}
	}
	if tel != "6789z" || ev != "cde" || alarms != 4 {
		t.Errorf("kept telemetry %q, events %q, %d alarms; want 6789z, cde, 4 (oldest dropped, alarms never)", tel, ev, alarms)
	}
	if err := db.Close(); err != nil {
		t.Fatal(err)
	}
	db = openTest(t, Options{Path: path})
	if got := db.Losses(); !equalLosses(got, want) {
		t.Errorf("losses after reopen %v, want %v (persisted)", got, want)
	}
}

func equalLosses(a, b map[Class]uint64) bool {
	for c := range numClasses {
		if a[c] != b[c] {
			return false
		}
	}
	return true
}

// Under the whole-store cap with no aggregates left, the outbox drops in
// order: telemetry, event waveforms, events, and alarms last.
func TestTrimDropOrder(t *testing.T) {
	t.Parallel()
	// 16 MiB: the class shares (at least 3 % = 480 kB) stay far above the
	// 100 kB queued per class, so only trim deletes here.
	db := openTest(t, Options{MaxSizeMB: 16})
	s := setup1([]int{1, 3, 5, 7, 9, 11, 13})
	if err := db.SetLayout(s); err != nil {
		t.Fatal(err)
	}
	payload := bytes.Repeat([]byte("w"), 900)
	// The order the README's "The store" section promises, written out
	// here rather than read from the code.
	order := []victim{
		{class: ClassSummary}, {class: ClassTelemetry},
		{class: ClassTelemetryCoarse}, {class: ClassEventWaveform},
		{level: metrics.Int3s},
		{class: ClassEvent},
		{level: metrics.Int10min}, {level: metrics.Int2h},
		{class: ClassAlarm},
	}
	// Victims in one group may go in either order among themselves.
	group := []int{0, 0, 1, 1, 2, 3, 4, 4, 5}
	for _, v := range order {
		if v.level != 0 {
			var recs []*metrics.Record
			for i := range 300 {
				recs = append(recs, smallRecord(s, v.level, t0.Add(time.Duration(i)*time.Hour), uint64(i)))
			}
			if err := db.PutAggregates(recs); err != nil {
				t.Fatal(err)
			}
			continue
		}
		var batch []Message
		for range 100 {
			m := msg(v.class, "")
			m.Payload = payload
			batch = append(batch, m)
		}
		if _, err := db.Enqueue(batch...); err != nil {
			t.Fatal(err)
		}
	}
	remaining := func(v victim) int {
		st := db.Stats()
		if v.level != 0 {
			return st.Records[v.level]
		}
		return st.Outbox[v.class]
	}
	lost := func(v victim) uint64 {
		if v.level != 0 {
			return db.LostRecords()[v.level]
		}
		return db.Losses()[v.class]
	}
	// Trim in steps of about 50 kB; at every step the victims touched are a
	// prefix of the order of sacrifice (README, The store): one given up
	// only once all before it are gone.
	for step := 0; ; step++ {
		db.wmu.Lock()
		err := db.trim(db.inUse() - 50_000)
		db.wmu.Unlock()
		if err != nil {
			t.Fatal(err)
		}
		for i, v := range order {
			if lost(v) == 0 {
				continue
			}
			for j, before := range order[:i] {
				if n := remaining(before); n != 0 && group[j] < group[i] {
					t.Fatalf("step %d: %+v lost data while %d of %+v remain", step, v, n, before)
				}
			}
		}
		if lost(order[len(order)-2]) > 0 || step > 200 {
			break
		}
	}
	for _, v := range order[:len(order)-2] {
		if remaining(v) != 0 || lost(v) == 0 {
			t.Errorf("%+v: %d remain, %d counted lost; want all given up and counted", v, remaining(v), lost(v))
		}
	}
	checkBolt(t, db)
}

// TestOutboxByteShare: a class's queue never holds more than its share of
// the usable file (classShare); what it gives up is counted and the count
// survives a reopen.
func TestOutboxByteShare(t *testing.T) {
	t.Parallel()
	path := filepath.Join(t.TempDir(), "share.db")
	db := openTest(t, Options{Path: path, MaxSizeMB: 2})
	payload := bytes.Repeat([]byte("t"), 2000)
	sent := 0
	for range 40 {
		var batch []Message
		for range 10 {
			m := msg(ClassTelemetry, "")
			m.Payload = payload
			batch = append(batch, m)
		}
		if _, err := db.Enqueue(batch...); err != nil {
			t.Fatal(err)
		}
		sent += len(batch)
	}
	share := int64(classShare[ClassTelemetry] * float64(db.usable))
	db.mu.Lock()
	held, n := db.outboxBytes[ClassTelemetry], db.outboxN[ClassTelemetry]
	db.mu.Unlock()
	if held > share {
		t.Errorf("telemetry queue %d bytes, share %d", held, share)
	}
	lost := db.Losses()[ClassTelemetry]
	if n == 0 || lost == 0 || int(lost)+n != sent {
		t.Errorf("%d kept + %d lost, %d sent; want kept+lost = sent and both > 0", n, lost, sent)
	}
	if err := db.Close(); err != nil {
		t.Fatal(err)
	}
	db2 := openTest(t, Options{Path: path, MaxSizeMB: 2})
	if got := db2.Losses()[ClassTelemetry]; got != lost {
		t.Errorf("after reopen %d lost, want %d", got, lost)
	}
	if got := db2.Stats().Outbox[ClassTelemetry]; got != n {
		t.Errorf("after reopen %d queued, want %d", got, n)
	}
}

// TestNoteUnstored: records and messages a failed write gave up are counted
// at once and persisted by the next write that succeeds.
func TestNoteUnstored(t *testing.T) {
	t.Parallel()
	path := filepath.Join(t.TempDir(), "unstored.db")
	db := openTest(t, Options{Path: path})
	s := setupV()
	if err := db.SetLayout(s); err != nil {
		t.Fatal(err)
	}
	recs := []*metrics.Record{smallRecord(s, metrics.Int3s, t0, 1), smallRecord(s, metrics.Int3s, t0.Add(3*time.Second), 2), smallRecord(s, metrics.Int10min, t0, 3)}
	db.NoteUnstored(recs, []Message{msg(ClassTelemetry, "a"), msg(ClassAlarm, "b")})
	if got := db.LostRecords(); got[metrics.Int3s] != 2 || got[metrics.Int10min] != 1 {
		t.Errorf("lost records %v, want 2 of 3 s and 1 of 10 min", got)
	}
	if got := db.Losses(); got[ClassTelemetry] != 1 || got[ClassAlarm] != 1 {
		t.Errorf("losses %v, want one telemetry and one alarm message", got)
	}
	if err := db.PutAggregates(recs[:1]); err != nil {
		t.Fatal(err)
	}
	if err := db.Close(); err != nil {
		t.Fatal(err)
	}
	db2 := openTest(t, Options{Path: path})
	if got := db2.LostRecords(); got[metrics.Int3s] != 2 || got[metrics.Int10min] != 1 {
		t.Errorf("after reopen lost records %v, want 2 and 1", got)
	}
	if got := db2.Losses(); got[ClassTelemetry] != 1 || got[ClassAlarm] != 1 {
		t.Errorf("after reopen losses %v", got)
	}
}
