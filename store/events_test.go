package store

import (
	"errors"
	"math"
	"testing"
	"time"

	bolt "go.etcd.io/bbolt"

	"github.com/gridloupe/gridloupe/metrics"
	"github.com/gridloupe/gridloupe/metrics/events"
)

func testWave(frames int) (*Waveform, func(i, c int) float32) {
	meta := &Waveform{Start: time.Date(2026, 3, 1, 10, 0, 0, 312_207_000, time.UTC), SampleRate: 10240,
		Channels:  []WaveChannel{{"va", true}, {"vb", true}, {"ia", false}},
		DeclaredV: 230, NominalHz: 50, DipPct: 90, SwellPct: 110, IntPct: 5, HystPct: 2}
	at := func(i, c int) float32 {
		if c == 1 && i == 7 {
			return float32(math.NaN())
		}
		a := []float64{325.27, 180.1, 56.6}[c]
		return float32(a * math.Sin(2*math.Pi*50.02*float64(i)/10240+float64(c)))
	}
	return meta, at
}

// TestWaveformRoundTrip: int16 counts of a per-channel scale keep every
// sample within half a count (peak/65534: closed form of rounding), NaN
// survives as missing, and the size is 2 bytes per sample plus the header.
func TestWaveformRoundTrip(t *testing.T) {
	t.Parallel()
	const frames = 4099
	meta, at := testWave(frames)
	b := EncodeWaveform(meta, frames, at)
	header := 1 + 8 + 8 + 4 + 1 + 6*4 + (1+2+1+4)*3
	if want := header + 2*frames*3; len(b) != want {
		t.Fatalf("%d bytes, want %d (stated budget: 2 bytes per sample plus header)", len(b), want)
	}
	w, err := DecodeWaveform(b)
	if err != nil {
		t.Fatal(err)
	}
	if !w.Start.Equal(meta.Start) || w.SampleRate != 10240 || len(w.Channels) != 3 || w.Channels[2] != (WaveChannel{"ia", false}) || w.DipPct != 90 {
		t.Fatalf("header %+v", w)
	}
	for c := range 3 {
		peak := 0.0
		for i := range frames {
			if v := float64(at(i, c)); v == v {
				peak = max(peak, math.Abs(v))
			}
		}
		tol := peak/32767/2 + peak*1e-6 // half a count, plus float32 rounding of scale and output (2^-23 each, of the peak)
		for i := range frames {
			want, got := float64(at(i, c)), float64(w.Samples[c][i])
			if math.IsNaN(want) != math.IsNaN(got) || (!math.IsNaN(want) && math.Abs(got-want) > tol) {
				t.Fatalf("channel %d frame %d: %v, want %v ± %v", c, i, got, want, tol)
			}
		}
	}
}

func TestEventsStored(t *testing.T) {
	t.Parallel()
	db := openTest(t, Options{})
	base := time.Date(2026, 3, 1, 10, 0, 0, 0, time.UTC)
	meta, at := testWave(2000)
	var ids []string
	for i := range 3 {
		start := base.Add(time.Duration(i) * time.Minute)
		r := events.Record{Kind: events.Dip, ID: events.ID(events.Dip, start), Start: start, DurationS: 0.12,
			Channels: []string{"va"}, Worst: "va", ExtremeV: 138.3, ExtremePct: 60.13, WaveformSamples: 2000, WaveformStart: start}
		msg := &Message{Class: ClassEvent, Topic: "gridloupe/s/g/event", Payload: []byte(`{"event":"dip"}`), QoS: 1}
		seq, err := db.PutEvent(r, EncodeWaveform(meta, 2000, at), msg)
		if err != nil || seq == 0 {
			t.Fatalf("PutEvent: %d %v", seq, err)
		}
		ids = append(ids, r.ID)
	}
	var got []events.Record
	if err := db.Events(base.Add(30*time.Second), time.Time{}, func(r events.Record) error { got = append(got, r); return nil }); err != nil {
		t.Fatal(err)
	}
	if len(got) != 2 || got[0].ID != ids[1] || got[0].Seq == 0 || got[0].ExtremeV != 138.3 || got[1].Kind != events.Dip {
		t.Fatalf("events from 10:00:30: %+v", got)
	}
	msgs, err := db.Pending(0, 10)
	if err != nil || len(msgs) != 3 || msgs[0].Class != ClassEvent {
		t.Fatalf("outbox %+v %v, want the three event messages", msgs, err)
	}
	rec, wave, err := db.Event(ids[2])
	if err != nil || rec.ID != ids[2] {
		t.Fatal(err)
	}
	if w, err := DecodeWaveform(wave); err != nil || len(w.Samples[0]) != 2000 {
		t.Fatalf("waveform: %v", err)
	}
	if _, _, err := db.Event("dip-nope"); !errors.Is(err, ErrNoEvent) {
		t.Fatalf("unknown id: %v, want ErrNoEvent", err)
	}
	checkBolt(t, db)
}

// TestEventLookupIsKeyed: among many events, Event finds each by its id
// (which names the start to the microsecond, metrics/events.ID), including
// two of different kinds in the same microsecond, without decoding the
// others: a damaged record elsewhere in the bucket does not disturb it.
func TestEventLookupIsKeyed(t *testing.T) {
	t.Parallel()
	db := openTest(t, Options{})
	meta, at := testWave(64)
	wave := EncodeWaveform(meta, 64, at)
	base := time.Date(2026, 3, 1, 10, 0, 0, 123_456_789, time.UTC)
	const n = 3000
	var ids []string
	for i := range n {
		start := base.Add(time.Duration(i) * 1500 * time.Millisecond)
		k := []events.Kind{events.Dip, events.Swell, events.Interruption}[i%3]
		r := events.Record{Kind: k, ID: events.ID(k, start), Start: start, DurationS: float64(i)}
		if _, err := db.PutEvent(r, wave, nil); err != nil {
			t.Fatal(err)
		}
		ids = append(ids, r.ID)
	}
	// A second event in the same microsecond as the last one.
	twin := events.Record{Kind: events.Dip, ID: events.ID(events.Dip, base.Add((n-1)*1500*time.Millisecond+300)),
		Start: base.Add((n-1)*1500*time.Millisecond + 300), DurationS: -1}
	if _, err := db.PutEvent(twin, nil, nil); err != nil {
		t.Fatal(err)
	}
	// Damage a record between the first and the others.
	err := db.bdb.Update(func(tx *bolt.Tx) error {
		return tx.Bucket(bktEvents).Put(aggKey(nil, base.Add(time.Second), 1), []byte{9, 9})
	})
	if err != nil {
		t.Fatal(err)
	}
	for _, i := range []int{0, 1, 2, n / 2, n - 2, n - 1} {
		r, w, err := db.Event(ids[i])
		if err != nil || r.ID != ids[i] || r.DurationS != float64(i) || len(w) != len(wave) {
			t.Fatalf("Event(%s): %+v, %d bytes, %v; want the record put under that id, with its waveform (src: DB.Event doc)", ids[i], r, len(w), err)
		}
	}
	if r, _, err := db.Event(twin.ID); r.DurationS != -1 || !errors.Is(err, ErrNoWaveform) {
		t.Fatalf("twin: %+v %v, want it, without a waveform (src: DB.Event doc, ErrNoWaveform; metrics/events.ID names the start to the microsecond)", r, err)
	}
	for _, id := range []string{"dip-nope", "sag-20260301T100000.123456Z", events.ID(events.Dip, base.Add(time.Hour*1000))} {
		if _, _, err := db.Event(id); !errors.Is(err, ErrNoEvent) {
			t.Fatalf("Event(%q): %v, want ErrNoEvent (src: DB.Event doc; a malformed id, an unknown kind, no event then)", id, err)
		}
	}
}

// TestWaveformCap: waveforms beyond a quarter of the usable file are
// dropped oldest first and counted as event_waveform losses; the event
// records stay.
func TestWaveformCap(t *testing.T) {
	t.Parallel()
	db := openTest(t, Options{MaxSizeMB: 4})
	meta, at := testWave(40960) // 4 s of 3 channels: 245,760 bytes each
	wave := EncodeWaveform(meta, 40960, at)
	base := time.Date(2026, 3, 1, 10, 0, 0, 0, time.UTC)
	for i := range 12 {
		start := base.Add(time.Duration(i) * time.Second)
		r := events.Record{Kind: events.Swell, ID: events.ID(events.Swell, start), Start: start}
		if _, err := db.PutEvent(r, wave, nil); err != nil {
			t.Fatal(err)
		}
	}
	lost := db.Losses()[ClassEventWaveform]
	if lost == 0 {
		t.Fatalf("no waveform dropped under a 4 MiB cap")
	}
	n := 0
	_ = db.Events(time.Time{}, time.Time{}, func(events.Record) error { n++; return nil })
	if n != 12 {
		t.Fatalf("%d events kept, want all 12", n)
	}
	if _, _, err := db.Event(events.ID(events.Swell, base)); !errors.Is(err, ErrNoWaveform) {
		t.Fatalf("oldest event: %v, want ErrNoWaveform", err)
	}
	if _, _, err := db.Event(events.ID(events.Swell, base.Add(11*time.Second))); err != nil {
		t.Fatalf("newest event: %v", err)
	}
	if kept := 12 - int(lost); int64(kept*len(wave)) > db.usable/waveShare {
		t.Fatalf("%d waveforms kept, over the budget", kept)
	}
}

func FuzzDecodeWaveform(f *testing.F) {
	meta, at := testWave(16)
	f.Add(EncodeWaveform(meta, 16, at))
	f.Add([]byte{1})
	f.Fuzz(func(t *testing.T, b []byte) {
		w, err := DecodeWaveform(b)
		if err == nil && len(w.Samples) != len(w.Channels) {
			t.Fatal("channels and samples disagree")
		}
		_, _ = decodeEvent(b)
	})
}

// TestTrimTakesStoredEvents: the whole-file cap gives stored event data up
// in the order of sacrifice (README "The store": event waveforms before the
// oldest 3 s records, events after them): waveforms first, each counted
// under event_waveform, then 3 s records, then event records with any
// waveform still kept, counted under event; no waveform outlives its event.
func TestTrimTakesStoredEvents(t *testing.T) {
	t.Parallel()
	db := openTest(t, Options{MaxSizeMB: 16})
	s := setup1([]int{1, 3, 5})
	if err := db.SetLayout(s); err != nil {
		t.Fatal(err)
	}
	var recs []*metrics.Record
	for i := range 300 {
		recs = append(recs, smallRecord(s, metrics.Int3s, t0.Add(time.Duration(i)*3*time.Second), uint64(i)))
	}
	if err := db.PutAggregates(recs); err != nil {
		t.Fatal(err)
	}
	meta, at := testWave(2000) // 12 kB each: an overflow run of its own
	wave := EncodeWaveform(meta, 2000, at)
	const nev = 20
	for i := range nev {
		start := t0.Add(time.Duration(i) * time.Minute)
		r := events.Record{Kind: events.Dip, ID: events.ID(events.Dip, start), Start: start}
		if _, err := db.PutEvent(r, wave, nil); err != nil {
			t.Fatal(err)
		}
	}
	counts := func() (evs, waves int) {
		_ = db.bdb.View(func(tx *bolt.Tx) error {
			evs, waves = tx.Bucket(bktEvents).Stats().KeyN, tx.Bucket(bktWaveforms).Stats().KeyN
			return nil
		})
		return
	}
	trimBy := func(n int64) {
		db.wmu.Lock()
		defer db.wmu.Unlock()
		if err := db.trim(db.inUse() - n); err != nil {
			t.Fatal(err)
		}
	}
	// 1. About half the waveforms' bytes: only waveforms go.
	trimBy(int64(nev/2) * int64(len(wave)))
	evs, waves := counts()
	if evs != nev || waves == nev || waves == 0 || db.Stats().Records[metrics.Int3s] != 300 {
		t.Fatalf("after a small trim: %d events, %d waveforms, %d 3 s records; want all events and records, some waveforms gone (src: README \"MQTT topics and payloads\", the order of sacrifice)",
			evs, waves, db.Stats().Records[metrics.Int3s])
	}
	if got := db.Losses()[ClassEventWaveform]; got != uint64(nev-waves) {
		t.Fatalf("event_waveform losses %d, want %d, one per waveform deleted (src: README \"MQTT topics and payloads\": every record or message given up is counted)", got, nev-waves)
	}
	if _, _, err := db.Event(events.ID(events.Dip, t0)); !errors.Is(err, ErrNoWaveform) {
		t.Fatalf("oldest event after the trim: %v, want ErrNoWaveform (src: README \"MQTT topics and payloads\": the oldest stored captures go first)", err)
	}
	// 2. Enough to take every waveform and then some 3 s records, not events.
	trimBy(int64(waves)*int64(len(wave)) + 20_000)
	evs, waves = counts()
	if evs != nev || waves != 0 || db.Stats().Records[metrics.Int3s] == 300 {
		t.Fatalf("after a larger trim: %d events, %d waveforms, %d 3 s records; want all events, no waveform, fewer records (src: README \"MQTT topics and payloads\", the order of sacrifice)", evs, waves, db.Stats().Records[metrics.Int3s])
	}
	if got := db.Losses()[ClassEventWaveform]; got != nev {
		t.Fatalf("event_waveform losses %d, want %d, every waveform (src: README \"MQTT topics and payloads\": every record or message given up is counted)", got, nev)
	}
	// 3. Past every 3 s record: the oldest events go, counted.
	for range 200 {
		if evs, _ = counts(); evs < nev {
			break
		}
		trimBy(20_000)
	}
	if db.Stats().Records[metrics.Int3s] != 0 || evs == nev {
		t.Fatalf("after trimming everything: %d 3 s records, %d events; want no record and fewer events (src: README \"MQTT topics and payloads\", the order of sacrifice)", db.Stats().Records[metrics.Int3s], evs)
	}
	if got := db.Losses()[ClassEvent]; got != uint64(nev-evs) {
		t.Fatalf("event losses %d, want %d, one per event deleted (src: README \"MQTT topics and payloads\": every record or message given up is counted)", got, nev-evs)
	}
	checkBolt(t, db)
}

// TestEventCapsCountWaveforms: an event record given up while its waveform
// is still kept takes the waveform with it, and both are counted: by the
// 20,000-record cap (README "Voltage events": "the oldest record goes,
// counted under event (its waveform, if still kept, under
// event_waveform)") and by the whole-file cap's stored events (README "MQTT
// topics and payloads": the oldest stored records with any capture still
// kept; every record or message given up is counted).
func TestEventCapsCountWaveforms(t *testing.T) {
	t.Parallel()
	meta, at := testWave(64)
	wave := EncodeWaveform(meta, 64, at)
	put := func(db *DB, start time.Time, w []byte) {
		t.Helper()
		r := events.Record{Kind: events.Dip, ID: events.ID(events.Dip, start), Start: start}
		if _, err := db.PutEvent(r, w, nil); err != nil {
			t.Fatal(err)
		}
	}
	counts := func(db *DB) (evs, waves int) {
		_ = db.bdb.View(func(tx *bolt.Tx) error {
			evs, waves = tx.Bucket(bktEvents).Stats().KeyN, tx.Bucket(bktWaveforms).Stats().KeyN
			return nil
		})
		return
	}
	t.Run("max events", func(t *testing.T) {
		db := openTest(t, Options{})
		put(db, t0, wave)
		put(db, t0.Add(time.Second), wave)
		// fill up to maxEvents directly, in one transaction, between them and the last
		err := db.bdb.Update(func(tx *bolt.Tx) error {
			eb := tx.Bucket(bktEvents)
			for i := range maxEvents - 1 {
				start := t0.Add(time.Minute + time.Duration(i)*time.Second)
				v, err := encodeEvent(&events.Record{Kind: events.Swell, ID: events.ID(events.Swell, start), Start: start})
				if err != nil {
					return err
				}
				if err := eb.Put(aggKey(nil, start, uint64(10+i)), v); err != nil {
					return err
				}
			}
			return nil
		})
		if err != nil {
			t.Fatal(err)
		}
		put(db, t0.Add(48*time.Hour), nil) // maxEvents + 2 records: the two oldest go
		evs, waves := counts(db)
		l := db.Losses()
		if evs != maxEvents || waves != 0 || l[ClassEvent] != 2 || l[ClassEventWaveform] != 2 {
			t.Fatalf("%d events, %d waveforms, losses event %d, event_waveform %d; want %d, 0, 2, 2 (src: README \"Voltage events\")",
				evs, waves, l[ClassEvent], l[ClassEventWaveform], maxEvents)
		}
	})
	t.Run("size cap", func(t *testing.T) {
		db := openTest(t, Options{})
		for i := range 3 {
			put(db, t0.Add(time.Duration(i)*time.Minute), wave)
		}
		db.wmu.Lock()
		n, err := db.deleteStoredEvents(storedEvents, 2, func(_, _ []byte) bool { return true })
		db.wmu.Unlock()
		if err != nil || n != 2 {
			t.Fatalf("deleteStoredEvents: %d, %v; want 2 (the limit)", n, err)
		}
		evs, waves := counts(db)
		l := db.Losses()
		if evs != 1 || waves != 1 || l[ClassEvent] != 2 || l[ClassEventWaveform] != 2 {
			t.Fatalf("%d events, %d waveforms, losses event %d, event_waveform %d; want 1, 1, 2, 2 (src: README \"MQTT topics and payloads\", the order of sacrifice)",
				evs, waves, l[ClassEvent], l[ClassEventWaveform])
		}
		if _, _, err := db.Event(events.ID(events.Dip, t0.Add(2*time.Minute))); err != nil {
			t.Fatalf("newest event: %v, want it with its waveform (src: the oldest go first)", err)
		}
		checkBolt(t, db)
	})
}
