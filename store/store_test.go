package store

import (
	"errors"
	"fmt"
	"math/rand/v2"
	"os"
	"path/filepath"
	"strings"
	"sync"
	"testing"
	"time"

	bolt "go.etcd.io/bbolt"
	berrors "go.etcd.io/bbolt/errors"

	"github.com/gridloupe/gridloupe/metrics"
)

// lockTimeout is short so the lock tests stay fast; bbolt polls every 50 ms.
const lockTimeout = 300 * time.Millisecond

func TestStoreRoundTrip(t *testing.T) {
	t.Parallel()
	path := filepath.Join(t.TempDir(), "rt.db")
	db := openTest(t, Options{Path: path})
	s := setup8(allOrders())
	if err := db.SetLayout(s); err != nil {
		t.Fatal(err)
	}
	rng := rand.New(rand.NewPCG(21, 22))
	var want []*metrics.Record
	for i := range 20 {
		r := newRecord(s)
		fillRecord(r, s, rng, t0.Add(time.Duration(i)*10*time.Minute), true)
		r.Interval = metrics.Int10min
		want = append(want, r)
	}
	if err := db.PutAggregates(want); err != nil {
		t.Fatal(err)
	}
	if err := db.Close(); err != nil {
		t.Fatal(err)
	}
	db = openTest(t, Options{Path: path})
	got, err := db.Layout()
	if err != nil {
		t.Fatal(err)
	}
	if len(got.Channels) != 8 || got.Channels[7].Name != "ix" || got.Channels[7].DelayS != 12e-6 ||
		len(got.Orders) != 50 || !got.AllOrders || got.ILA != 160 || len(got.Pairs) != 3 || got.Neutral != 6 || got.Wiring != metrics.Wye {
		t.Fatalf("layout after reopen: %+v", got)
	}
	var n int
	err = db.Query(metrics.Int10min, t0, time.Time{}, func(r *metrics.Record) error {
		compareRecords(t, want[n], r)
		n++
		return nil
	})
	if err != nil || n != len(want) {
		t.Fatalf("Query: %d records, err %v; want %d", n, err, len(want))
	}
	// [from, to): records 3..5.
	n = 0
	err = db.Query(metrics.Int10min, want[3].Start, want[6].Start, func(r *metrics.Record) error {
		compareRecords(t, want[3+n], r)
		n++
		return nil
	})
	if err != nil || n != 3 {
		t.Fatalf("ranged Query: %d records, err %v; want 3", n, err)
	}
	last, err := db.Last(metrics.Int10min, 12)
	if err != nil || len(last) != 12 {
		t.Fatalf("Last: %d, %v", len(last), err)
	}
	for i, r := range last {
		compareRecords(t, want[8+i], r)
	}
	stop := errors.New("stop")
	if err := db.Query(metrics.Int10min, t0, time.Time{}, func(*metrics.Record) error { return stop }); err != stop {
		t.Errorf("Query returned %v, want fn's own error", err)
	}
	if st := db.Stats(); st.Records[metrics.Int10min] != 20 || st.Sequence != 20 {
		t.Errorf("Stats: %+v", st)
	}
	checkBolt(t, db)
}

func TestPutRejects(t *testing.T) {
	t.Parallel()
	db := openTest(t, Options{})
	s := setup1([]int{1})
	if err := db.PutAggregates([]*metrics.Record{smallRecord(s, metrics.Int3s, t0, 1)}); !errors.Is(err, ErrNoLayout) {
		t.Errorf("before SetLayout: %v, want ErrNoLayout", err)
	}
	if err := db.SetLayout(s); err != nil {
		t.Fatal(err)
	}
	cases := []struct {
		name string
		rec  *metrics.Record
		want error
		src  string
	}{
		{"200ms not stored", smallRecord(s, metrics.Int200ms, t0, 1), ErrBadRecord, "DESIGN: buckets 3s, 10min, 2h"},
		{"before 1970", smallRecord(s, metrics.Int3s, time.Date(1969, 12, 31, 0, 0, 0, 0, time.UTC), 1), ErrBadRecord, "key is UnixNano as uint64"},
		{"nil", nil, ErrBadRecord, "common practice, no source"},
		{"wrong layout", smallRecord(setup8([]int{1}), metrics.Int3s, t0, 1), ErrBadLayout, "layout contract"},
	}
	for _, tc := range cases {
		if err := db.PutAggregates([]*metrics.Record{smallRecord(s, metrics.Int3s, t0, 1), tc.rec}); !errors.Is(err, tc.want) {
			t.Errorf("%s: got %v, want %v", tc.name, err, tc.want)
		}
	}
	if st := db.Stats(); st.Records[metrics.Int3s] != 0 {
		t.Errorf("a rejected batch stored %d records", st.Records[metrics.Int3s])
	}
}

// A wall-clock step back of 1 h: later-written records with earlier (and
// equal) starts sort before the earlier-written ones; nothing is overwritten.
func TestClockStepBack(t *testing.T) {
	t.Parallel()
	db := openTest(t, Options{})
	s := setup1([]int{1})
	if err := db.SetLayout(s); err != nil {
		t.Fatal(err)
	}
	var batch []*metrics.Record
	tag := uint64(0)
	for i := range 100 { // t0 .. t0+297 s
		tag++
		batch = append(batch, smallRecord(s, metrics.Int3s, t0.Add(time.Duration(i)*3*time.Second), tag))
	}
	if err := db.PutAggregates(batch); err != nil {
		t.Fatal(err)
	}
	batch = batch[:0]
	for i := range 1300 { // the clock stepped back 1 h: t0−1h .. t0+297 s again
		tag++
		batch = append(batch, smallRecord(s, metrics.Int3s, t0.Add(-time.Hour+time.Duration(i)*3*time.Second), tag))
	}
	if err := db.PutAggregates(batch); err != nil {
		t.Fatal(err)
	}
	seen := map[uint64]bool{}
	var prev time.Time
	var dupStart int
	err := db.Query(metrics.Int3s, time.Unix(0, 0), time.Time{}, func(r *metrics.Record) error {
		if r.Start.Before(prev) {
			t.Errorf("key order is not time order: %v after %v", r.Start, prev)
		}
		if r.Start.Equal(prev) {
			dupStart++
			// Equal starts: the one written first (smaller seq, smaller tag) comes first.
			if !seen[r.Samples-1200] {
				t.Errorf("equal start %v: tag %d before its earlier twin", r.Start, r.Samples)
			}
		}
		prev = r.Start
		seen[r.Samples] = true
		return nil
	})
	if err != nil {
		t.Fatal(err)
	}
	if len(seen) != 1400 {
		t.Errorf("%d records present, want 1400 (none overwritten)", len(seen))
	}
	if dupStart != 100 {
		t.Errorf("%d records share a start with another, want 100", dupStart)
	}
	checkBolt(t, db)
}

func TestLayoutChange(t *testing.T) {
	t.Parallel()
	path := filepath.Join(t.TempDir(), "lay.db")
	db := openTest(t, Options{Path: path})
	a, b := setup1([]int{1, 3}), setup8([]int{1, 5, 7})
	if err := db.SetLayout(a); err != nil {
		t.Fatal(err)
	}
	if err := db.PutAggregates([]*metrics.Record{smallRecord(a, metrics.Int3s, t0, 1)}); err != nil {
		t.Fatal(err)
	}
	if err := db.SetLayout(b); err != nil {
		t.Fatal(err)
	}
	rb := newRecord(b)
	fillRecord(rb, b, rand.New(rand.NewPCG(1, 1)), t0.Add(3*time.Second), true)
	rb.Interval = metrics.Int10min // the 3 s level is stored slim (codec3s.go): compare the full form
	if err := db.PutAggregates([]*metrics.Record{rb}); err != nil {
		t.Fatal(err)
	}
	if err := db.Close(); err != nil {
		t.Fatal(err)
	}
	db = openTest(t, Options{Path: path})
	if l, err := db.Layout(); err != nil || len(l.Channels) != 8 {
		t.Fatalf("current layout: %v, %v", l, err)
	}
	var got []*metrics.Record
	if err := db.Query(metrics.Int3s, t0, time.Time{}, func(r *metrics.Record) error { got = append(got, r); return nil }); err != nil {
		t.Fatal(err)
	}
	if err := db.Query(metrics.Int10min, t0, time.Time{}, func(r *metrics.Record) error { got = append(got, r); return nil }); err != nil {
		t.Fatal(err)
	}
	if len(got) != 2 || len(got[0].Channels) != 2 || len(got[0].Channels[0].H) != 2 || got[0].Channels[0].H[1].H != 3 {
		t.Fatalf("old record not decoded with its own layout: %+v", got)
	}
	compareRecords(t, rb, got[1])
	// Setting the first layout again reuses its id.
	if err := db.SetLayout(a); err != nil {
		t.Fatal(err)
	}
	if db.curID != 1 {
		t.Errorf("layout id %d, want 1 (reused)", db.curID)
	}
}

func TestRetention(t *testing.T) {
	t.Parallel()
	const (
		days      = 30
		retention = 7 * 24 * time.Hour
		// growthTol: the file may still settle a little after day 10 (README "The store": the file stays bounded; 1.1× is common practice, no source).
		growthTol = 1.1
	)
	step := 3 * time.Second // the real 3 s cadence
	if testing.Short() || raceEnabled {
		step = 30 * time.Second // same shape, a tenth of the records
	}
	now := t0
	db := openTest(t, Options{
		Retention: map[metrics.Interval]time.Duration{metrics.Int3s: retention},
		Clock:     func() time.Time { return now },
	})
	s := setupV()
	if err := db.SetLayout(s); err != nil {
		t.Fatal(err)
	}
	perBatch := 200
	batch := make([]*metrics.Record, perBatch)
	for i := range batch {
		batch[i] = smallRecord(s, metrics.Int3s, now, 0)
	}
	var size10 int64
	nextPrune := now.Add(time.Hour)
	end := t0.Add(days * 24 * time.Hour)
	for now.Before(end) {
		for i := range batch {
			batch[i].Start = now
			now = now.Add(step)
		}
		if err := db.PutAggregates(batch); err != nil {
			t.Fatal(err)
		}
		if !now.Before(nextPrune) {
			if _, err := db.Prune(time.Time{}); err != nil {
				t.Fatal(err)
			}
			nextPrune = nextPrune.Add(time.Hour)
		}
		if size10 == 0 && now.Sub(t0) >= 10*24*time.Hour {
			size10 = db.Stats().FileBytes
		}
	}
	st := db.Stats()
	t.Logf("file %d bytes at day 10, %d at day 30; %d records kept", size10, st.FileBytes, st.Records[metrics.Int3s])
	if float64(st.FileBytes) > growthTol*float64(size10) {
		t.Errorf("file grew from %d to %d bytes between day 10 and 30", size10, st.FileBytes)
	}
	err := db.Query(metrics.Int3s, time.Unix(0, 0), now.Add(-retention-2*time.Hour), func(r *metrics.Record) error {
		return fmt.Errorf("a record past retention is still there: %v", r.Start)
	})
	if err != nil {
		t.Error(err)
	}
	wantKept := int(retention / step)
	if got := st.Records[metrics.Int3s]; got < wantKept || got > wantKept+int(2*time.Hour/step) {
		t.Errorf("%d records kept, want 7 days (%d) plus at most 2 h", got, wantKept)
	}
	checkBolt(t, db)
}

func TestSizeCap(t *testing.T) {
	t.Parallel()
	const (
		capMB = 2
		// bbolt's MaxSize check keeps the file at or below the cap exactly;
		// margin 0 is what it promises (db.go allocate), no slack needed.
		capMargin = 0
	)
	db := openTest(t, Options{MaxSizeMB: capMB})
	s := setup8(orders17)
	if err := db.SetLayout(s); err != nil {
		t.Fatal(err)
	}
	rng := rand.New(rand.NewPCG(31, 32))
	// A few 10-min records first: the cap must take 3 s records before them.
	var tenMin []*metrics.Record
	for i := range 5 {
		r := newRecord(s)
		fillRecord(r, s, rng, t0.Add(time.Duration(i)*10*time.Minute), true)
		r.Interval = metrics.Int10min
		tenMin = append(tenMin, r)
	}
	if err := db.PutAggregates(tenMin); err != nil {
		t.Fatal(err)
	}
	batches := 40 // 8,000 records of 1.6 kB ≈ 6 × the cap
	if testing.Short() {
		batches = 20
	}
	batch := make([]*metrics.Record, 200)
	for i := range batch {
		batch[i] = newRecord(s)
		fillRecord(batch[i], s, rng, t0, true)
	}
	now := t0
	for range batches {
		for _, r := range batch {
			r.Start = now
			now = now.Add(3 * time.Second)
		}
		if err := db.PutAggregates(batch); err != nil {
			t.Fatal(err)
		}
		if _, err := db.Prune(now); err != nil {
			t.Fatal(err)
		}
		if st := db.Stats(); st.FileBytes > capMB<<20+capMargin {
			t.Fatalf("file %d bytes, cap %d", st.FileBytes, capMB<<20)
		}
	}
	st := db.Stats()
	t.Logf("file %d bytes, in use %d, usable %d, %d records of 3 s, %d trims", st.FileBytes, st.InUseBytes, st.UsableBytes, st.Records[metrics.Int3s], st.CapTrims)
	if st.CapTrims == 0 || st.Records[metrics.Int3s] >= batches*200 {
		t.Errorf("the cap never trimmed: %+v", st)
	}
	if st.Records[metrics.Int10min] != 5 {
		t.Errorf("%d 10-min records left, want 5 (3 s goes first)", st.Records[metrics.Int10min])
	}
	last, err := db.Last(metrics.Int3s, 1)
	if err != nil || len(last) != 1 || !last[0].Start.Equal(now.Add(-3*time.Second)) {
		t.Errorf("newest record lost: %v %v", last, err)
	}
	checkBolt(t, db)
}

// usableBytes must agree with bbolt: fill a raw bbolt file under MaxSize
// until it refuses, and compare the high-water mark reached.
func TestUsableBytesMatchesBolt(t *testing.T) {
	t.Parallel()
	caps := []int64{1 << 20, 3 << 20, 20 << 20}
	if testing.Short() {
		caps = caps[:2]
	}
	for _, capBytes := range caps {
		path := filepath.Join(t.TempDir(), "raw.db")
		bdb, err := bolt.Open(path, 0o600, &bolt.Options{Timeout: time.Second, MaxSize: int(capBytes), NoSync: true, NoFreelistSync: true, FreelistType: bolt.FreelistMapType})
		if err != nil {
			t.Fatal(err)
		}
		ps := int64(bdb.Info().PageSize)
		want := usableBytes(capBytes, ps, int64(bdb.AllocSize))
		var hwm int64
		val := make([]byte, 3000)
		for i := 0; ; i++ {
			err = bdb.Update(func(tx *bolt.Tx) error {
				b, err := tx.CreateBucketIfNotExists([]byte("x"))
				if err != nil {
					return err
				}
				b.FillPercent = 1
				for j := range 4 {
					if err := b.Put(be.AppendUint64(nil, uint64(4*i+j)), val); err != nil {
						return err
					}
				}
				return nil
			})
			if err != nil {
				break
			}
			_ = bdb.View(func(tx *bolt.Tx) error { hwm = tx.Size(); return nil })
		}
		if !errors.Is(err, berrors.ErrMaxSizeReached) {
			t.Fatalf("cap %d: %v", capBytes, err)
		}
		// slack: the refused transaction needed up to ~4 values + branch pages.
		slack := 8 * ps
		if hwm > want || hwm < want-slack {
			t.Errorf("cap %d: bbolt stopped at %d bytes, usableBytes says %d", capBytes, hwm, want)
		}
		_ = bdb.Close()
	}
}

func TestLocked(t *testing.T) {
	t.Parallel()
	path := filepath.Join(t.TempDir(), "lock.db")
	db := openTest(t, Options{Path: path})
	// flock locks belong to the open file description, so a second Open in
	// this same process conflicts just as another process would.
	for _, open := range []func() (*DB, error){
		func() (*DB, error) { return OpenReadOnly(path, lockTimeout) },
		func() (*DB, error) { return Open(Options{Path: path, Timeout: lockTimeout}) },
	} {
		begin := time.Now()
		db2, err := open()
		if err == nil {
			_ = db2.Close()
			t.Fatal("a second open succeeded while the file is held")
		}
		if !errors.Is(err, ErrLocked) || !strings.Contains(err.Error(), "held by another process (a running `gridloupe run`?)") ||
			!strings.Contains(err.Error(), path) {
			t.Errorf("error %q", err)
		}
		if d := time.Since(begin); d < lockTimeout/2 {
			t.Errorf("gave up after %v, timeout %v", d, lockTimeout)
		}
	}
	if err := db.Close(); err != nil {
		t.Fatal(err)
	}
	ro, err := OpenReadOnly(path, lockTimeout)
	if err != nil {
		t.Fatalf("read-only open after the writer closed: %v", err)
	}
	defer ro.Close()
	if err := ro.SetLayout(setup1([]int{1})); !errors.Is(err, ErrReadOnly) {
		t.Errorf("write on read-only: %v", err)
	}
	if _, err := ro.Last(metrics.Int3s, 3); err != nil {
		t.Errorf("read on read-only: %v", err)
	}
}

func TestOpenErrors(t *testing.T) {
	t.Parallel()
	dir := t.TempDir()
	file := filepath.Join(dir, "plain")
	if err := os.WriteFile(file, []byte("x"), 0o600); err != nil {
		t.Fatal(err)
	}
	cases := []struct {
		name string
		opts Options
		src  string
	}{
		{"parent is a file", Options{Path: filepath.Join(file, "g.db")}, "POSIX open: ENOTDIR"},
		{"missing dir", Options{Path: filepath.Join(dir, "no", "g.db")}, "POSIX open: ENOENT"},
		{"not a bbolt file", Options{Path: file}, "bbolt: invalid database"},
		{"read-only missing", Options{Path: filepath.Join(dir, "none.db"), ReadOnly: true}, "POSIX open: ENOENT"},
	}
	for _, tc := range cases {
		db, err := Open(tc.opts)
		if err == nil {
			_ = db.Close()
			t.Errorf("%s: opened", tc.name)
			continue
		}
		if !strings.Contains(err.Error(), tc.opts.Path) && !strings.Contains(err.Error(), filepath.Base(tc.opts.Path)) {
			t.Errorf("%s: %q does not name the file", tc.name, err)
		}
	}
}

func TestCloseTwice(t *testing.T) {
	t.Parallel()
	db := openTest(t, Options{})
	if err := db.Close(); err != nil {
		t.Fatal(err)
	}
	if err := db.Close(); err != nil {
		t.Errorf("second Close: %v", err)
	}
	if _, err := db.Enqueue(Message{Topic: "t"}); !errors.Is(err, ErrClosed) {
		t.Errorf("Enqueue after Close: %v", err)
	}
	if _, err := db.Pending(0, 1); !errors.Is(err, ErrClosed) {
		t.Errorf("Pending after Close: %v", err)
	}
	_ = db.Stats()
}

// Writers and readers from several goroutines at once (run with -race).
func TestConcurrentUse(t *testing.T) {
	t.Parallel()
	db := openTest(t, Options{})
	s := setup1([]int{1, 3})
	if err := db.SetLayout(s); err != nil {
		t.Fatal(err)
	}
	const n = 30
	var wg sync.WaitGroup
	errs := make(chan error, 4*n)
	wg.Go(func() {
		for i := range n {
			errs <- db.PutAggregates([]*metrics.Record{smallRecord(s, metrics.Int3s, t0.Add(time.Duration(i)*3*time.Second), uint64(i))})
		}
	})
	wg.Go(func() {
		for range n {
			_, err := db.Enqueue(Message{Topic: "gridloupe/larkfield-ah4/ah4-gw1/event", Class: ClassEvent})
			errs <- err
		}
	})
	wg.Go(func() {
		for range n {
			p, err := db.Pending(0, 5)
			if err == nil && len(p) > 0 {
				err = db.Ack(p[0].Seq)
			}
			errs <- err
		}
	})
	wg.Go(func() {
		for range n {
			_, err := db.Last(metrics.Int3s, 3)
			_ = db.Stats()
			errs <- err
		}
	})
	wg.Wait()
	close(errs)
	for err := range errs {
		if err != nil {
			t.Error(err)
		}
	}
	st := db.Stats()
	if st.Records[metrics.Int3s] != n || st.MessageSeq != n {
		t.Errorf("after concurrent use: %+v", st)
	}
	checkBolt(t, db)
}
