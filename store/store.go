package store

import (
	"errors"
	"fmt"
	"log/slog"
	"os"
	"path/filepath"
	"sync"
	"time"

	bolt "go.etcd.io/bbolt"
	berrors "go.etcd.io/bbolt/errors"

	"github.com/gridloupe/gridloupe/metrics"
)

// Defaults.
const (
	DefaultTimeout   = 2 * time.Second
	DefaultMaxSizeMB = 512
)

// Fill levels of the usable space (see usableBytes) that start and end a trim.
const (
	trimHigh = 0.90
	trimLow  = 0.80
)

// defaultReleaseEvery is how often (wall time) PutAggregates drops the
// memory map's resident pages (releaseMapped).
const defaultReleaseEvery = 30 * time.Second

// fillPercent for append-mostly buckets: keys arrive in ascending order, so
// split pages can be filled almost full (bbolt's default 0.5 would leave
// every leaf half empty).
const fillPercent = 0.95

// Options configure Open.
type Options struct {
	Path      string                             // the bbolt file; created with its buckets when absent
	Timeout   time.Duration                      // file-lock wait; 0 = DefaultTimeout (never "forever")
	MaxSizeMB int                                // hard cap on the file, MiB; 0 = DefaultMaxSizeMB
	Retention map[metrics.Interval]time.Duration // age limit per level; 0 or absent = keep forever
	ReadOnly  bool                               // shared lock, no writes
	Clock     func() time.Time                   // for Prune with a zero time; nil = time.Now
	Logger    *slog.Logger                       // nil = discard
	NoSync    bool                               // skip fsync per commit: for tests and throw-away stores only
}

// DB is an open store. It is safe for concurrent use.
type DB struct {
	bdb      *bolt.DB
	opts     Options
	log      *slog.Logger
	path     string
	usable   int64 // largest high-water mark bbolt allows under MaxSizeMB
	pageSize int64

	wmu          sync.Mutex    // serialises writes (and so bbolt's remaps); owns buf and the release fields
	lastRelease  time.Time     // last releaseMapped
	releaseEvery time.Duration // defaultReleaseEvery; tests force a release per commit with 0
	buf          []byte
	hookMidBatch func() // tests: runs inside PutBatch's transaction between the records and the messages

	mu      sync.Mutex // guards the fields below
	closed  bool
	layouts map[uint16]*metrics.Setup
	curID   uint16
	counts  map[metrics.Interval]int
	outboxN [numClasses]int
	// outboxBytes is each class's queue size (entryBytes summed), for classShare.
	outboxBytes [numClasses]int64
	lostRecs    [len(levels)]uint64 // records given up per level (LostRecords)
	lossDirty   bool                // NoteUnstored counted losses not yet persisted
	caps        map[Class]int
	losses      [numClasses]uint64
	capTrims    int
}

// Bucket names.
var (
	bktMeta    = []byte("meta")
	bktLayouts = []byte("layouts")
	bktAlarms  = []byte("alarms")
	bktMsgSeq  = []byte("outbox_seq") // its bucket sequence is the message counter
	keyCurLay  = []byte("layout_current")
)

var levels = [...]metrics.Interval{metrics.Int3s, metrics.Int10min, metrics.Int2h}

func levelBucket(iv metrics.Interval) ([]byte, error) {
	for _, l := range levels {
		if l == iv {
			return []byte(iv.String()), nil
		}
	}
	return nil, fmt.Errorf("interval %s is not stored: %w", iv, ErrBadRecord)
}

// Open opens (or creates) the store file. A file locked by another writer
// fails after opts.Timeout with ErrLocked.
func Open(opts Options) (*DB, error) {
	if opts.Timeout <= 0 {
		opts.Timeout = DefaultTimeout
	}
	if opts.MaxSizeMB == 0 {
		opts.MaxSizeMB = DefaultMaxSizeMB
	}
	if opts.MaxSizeMB < 1 {
		return nil, fmt.Errorf("store: max size %d MB: must be at least 1", opts.MaxSizeMB)
	}
	if opts.Path == "" {
		return nil, errors.New("store: no path")
	}
	if opts.Clock == nil {
		opts.Clock = time.Now
	}
	log := opts.Logger
	if log == nil {
		log = slog.New(slog.DiscardHandler)
	}
	capBytes := int64(opts.MaxSizeMB) << 20
	bo := &bolt.Options{
		Timeout:        opts.Timeout,
		NoFreelistSync: true,
		FreelistType:   bolt.FreelistMapType,
		ReadOnly:       opts.ReadOnly,
		MaxSize:        int(min(capBytes, int64(maxInt))),
		NoSync:         opts.NoSync,
	}
	fi, statErr := os.Stat(opts.Path)
	if opts.ReadOnly && statErr != nil {
		return nil, openError(opts, statErr)
	}
	if !opts.ReadOnly && statErr == nil && fi.Size() > 0 {
		// bbolt's writable open scans every page on a goroutine of its own,
		// where damage cannot be recovered: check the file read-only first.
		ro := *bo
		ro.ReadOnly = true
		vdb, err := openGuarded(opts.Path, &ro)
		if err != nil {
			return nil, openError(opts, err)
		}
		if err := verify(vdb, opts.Path); err != nil {
			return nil, err
		}
		if err := vdb.Close(); err != nil {
			return nil, fmt.Errorf("store: close %s after checking it: %w", opts.Path, err)
		}
	}
	bdb, err := openGuarded(opts.Path, bo)
	if err != nil {
		return nil, openError(opts, err)
	}
	if opts.ReadOnly {
		if err := verify(bdb, opts.Path); err != nil {
			return nil, err
		}
	}
	db := &DB{
		bdb: bdb, opts: opts, log: log.With("store", opts.Path), path: opts.Path,
		layouts: map[uint16]*metrics.Setup{}, counts: map[metrics.Interval]int{}, caps: map[Class]int{},
		releaseEvery: defaultReleaseEvery,
	}
	// Read once: bbolt's Info() reads the mmap fields unlocked and races with a remap.
	db.pageSize = int64(bdb.Info().PageSize)
	db.usable = usableBytes(capBytes, db.pageSize, int64(bdb.AllocSize))
	if !opts.ReadOnly {
		if err := db.update(createBuckets); err != nil {
			return nil, errors.Join(fmt.Errorf("store: %s: create buckets: %w", opts.Path, err), bdb.Close())
		}
	}
	if err := db.view(db.load); err != nil {
		if !errors.Is(err, ErrDamaged) {
			err = damaged(opts.Path, err)
		}
		return nil, errors.Join(err, bdb.Close())
	}
	return db, nil
}

const maxInt = int64(^uint(0) >> 1)

// OpenReadOnly opens an existing store for reading (for export when no
// daemon holds the file). A lock held by a running daemon fails after timeout.
func OpenReadOnly(path string, timeout time.Duration) (*DB, error) {
	return Open(Options{Path: path, Timeout: timeout, ReadOnly: true})
}

func openError(opts Options, err error) error {
	path := opts.Path
	switch {
	case errors.Is(err, ErrDamaged):
		return err
	case errors.Is(err, berrors.ErrTimeout):
		return fmt.Errorf("store: %s is held by another process (a running `gridloupe run`?): %w", path, ErrLocked)
	case errors.Is(err, os.ErrNotExist) && opts.ReadOnly:
		return fmt.Errorf("store: %s does not exist: %w", path, err)
	case errors.Is(err, os.ErrPermission) && opts.ReadOnly:
		return fmt.Errorf("store: cannot read %s (check its permissions): %w", path, err)
	case errors.Is(err, os.ErrPermission), errors.Is(err, os.ErrNotExist):
		if _, serr := os.Stat(path); serr == nil {
			return fmt.Errorf("store: cannot open %s for reading and writing (check its permissions): %w", path, err)
		}
		return fmt.Errorf("store: cannot create %s (is %s writable?): %w", path, filepath.Dir(path), err)
	}
	return fmt.Errorf("store: open %s: %w", path, err)
}

func createBuckets(tx *bolt.Tx) error {
	names := [][]byte{bktMeta, bktLayouts, bktAlarms, bktMsgSeq}
	for _, l := range levels {
		names = append(names, []byte(l.String()))
	}
	for c := range numClasses {
		names = append(names, classBucket(Class(c)))
	}
	for _, n := range names {
		if _, err := tx.CreateBucketIfNotExists(n); err != nil {
			return fmt.Errorf("bucket %s: %w", n, err)
		}
	}
	return nil
}

// load reads layouts, counters and counts into memory.
func (db *DB) load(tx *bolt.Tx) error {
	if lb := tx.Bucket(bktLayouts); lb != nil {
		err := lb.ForEach(func(k, v []byte) error {
			if len(k) != 2 {
				return fmt.Errorf("layout key %x: %w", k, ErrCorrupt)
			}
			s, err := unmarshalLayout(v)
			if err != nil {
				return fmt.Errorf("layout %d: %w", be.Uint16(k), err)
			}
			db.layouts[be.Uint16(k)] = s
			return nil
		})
		if err != nil {
			return err
		}
	}
	if mb := tx.Bucket(bktMeta); mb != nil {
		if v := mb.Get(keyCurLay); len(v) == 2 {
			db.curID = be.Uint16(v)
		}
		for c := range numClasses {
			if v := mb.Get(lossKey(Class(c))); len(v) == 8 {
				db.losses[c] = be.Uint64(v)
			}
		}
		for i, l := range levels {
			if v := mb.Get(lostRecordsKey(l)); len(v) == 8 {
				db.lostRecs[i] = be.Uint64(v)
			}
		}
	}
	for _, l := range levels {
		if b := tx.Bucket([]byte(l.String())); b != nil {
			db.counts[l] = b.Stats().KeyN
		}
	}
	for c := range numClasses {
		if b := tx.Bucket(classBucket(Class(c))); b != nil {
			err := b.ForEach(func(k, v []byte) error {
				db.outboxN[c]++
				db.outboxBytes[c] += entryBytes(k, v)
				return nil
			})
			if err != nil {
				return err
			}
		}
	}
	return nil
}

// Close closes the file. It may be called more than once.
func (db *DB) Close() error {
	db.wmu.Lock()
	defer db.wmu.Unlock()
	db.mu.Lock()
	if db.closed {
		db.mu.Unlock()
		return nil
	}
	db.closed = true
	db.mu.Unlock()
	if err := db.bdb.Close(); err != nil {
		return fmt.Errorf("store: close %s: %w", db.path, err)
	}
	return nil
}

// beginWrite takes the writer lock and checks the DB is open and writable.
// On success the caller must call db.wmu.Unlock.
func (db *DB) beginWrite() error {
	db.wmu.Lock()
	db.mu.Lock()
	closed := db.closed
	db.mu.Unlock()
	switch {
	case closed:
		db.wmu.Unlock()
		return ErrClosed
	case db.opts.ReadOnly:
		db.wmu.Unlock()
		return ErrReadOnly
	}
	return nil
}

func (db *DB) isClosed() bool {
	db.mu.Lock()
	defer db.mu.Unlock()
	return db.closed
}

// view runs fn in a read transaction, failing with ErrClosed after Close.
func (db *DB) view(fn func(tx *bolt.Tx) error) error {
	if db.isClosed() {
		return ErrClosed
	}
	return guarded(db.path, func() error { return db.bdb.View(fn) })
}

// Stats describes the store.
type Stats struct {
	Records      map[metrics.Interval]int // stored records per level
	Outbox       map[Class]int            // queued messages per class
	FileBytes    int64                    // size of the file on disk
	InUseBytes   int64                    // high-water mark minus free and pending pages
	UsableBytes  int64                    // high-water mark bbolt allows under MaxSizeMB
	Writes       int64                    // page runs written since Open (bbolt TxStats), meta pages included
	BytesWritten int64                    // Writes × page size: a lower bound (an overflow run counts once)
	Sequence     uint64                   // last aggregate sequence number
	MessageSeq   uint64                   // last outbox sequence number
	CapTrims     int                      // trims forced by the size cap since Open
}

// Stats returns the store's counters. After Close it returns the last counts
// and zero sizes.
func (db *DB) Stats() Stats {
	db.mu.Lock()
	st := Stats{Records: map[metrics.Interval]int{}, Outbox: map[Class]int{}, UsableBytes: db.usable, CapTrims: db.capTrims}
	for l, n := range db.counts {
		st.Records[l] = n
	}
	for c := range numClasses {
		st.Outbox[Class(c)] = db.outboxN[c]
	}
	db.mu.Unlock()
	if db.isClosed() {
		return st
	}
	bs := db.bdb.Stats()
	ps := db.pageSize
	st.Writes = bs.TxStats.GetWrite()
	st.BytesWritten = st.Writes * ps
	_ = db.bdb.View(func(tx *bolt.Tx) error {
		st.InUseBytes = tx.Size() - int64(bs.FreePageN+bs.PendingPageN)*ps
		if b := tx.Bucket(bktMeta); b != nil {
			st.Sequence = b.Sequence()
		}
		if b := tx.Bucket(bktMsgSeq); b != nil {
			st.MessageSeq = b.Sequence()
		}
		return nil
	})
	if fi, err := os.Stat(db.path); err == nil {
		st.FileBytes = fi.Size()
	}
	return st
}

// usableBytes is the largest high-water mark (bytes) bbolt v1.5 lets a file
// reach under MaxSize = capBytes on Linux: a page allocation that needs minsz
// bytes fails when growSize(mmapSize(minsz)) > MaxSize, where mmapSize
// doubles from 32 KiB to 1 GiB and, above allocSize, the file grows to
// minsz + allocSize (bbolt db.go: allocate, mmapSize, growSize).
// TestUsableBytesMatchesBolt checks this against bbolt itself.
func usableBytes(capBytes, pageSize, allocSize int64) int64 {
	fits := func(minsz int64) bool {
		m := int64(1 << 15)
		for m < minsz && m < 1<<30 {
			m <<= 1
		}
		if m < minsz { // above 1 GiB bbolt grows in 1 GiB steps
			m = (minsz + 1<<30 - 1) &^ (1<<30 - 1)
		}
		if m <= allocSize {
			return m <= capBytes
		}
		return minsz+allocSize <= capBytes
	}
	lo, hi := int64(0), capBytes/pageSize // in pages: lo fits, hi+1 unknown
	for lo < hi {
		mid := (lo + hi + 1) / 2
		if fits((mid + 1) * pageSize) {
			lo = mid
		} else {
			hi = mid - 1
		}
	}
	return lo * pageSize
}

// Check runs bbolt's consistency check over the whole file (every page
// reachable once, freelist consistent) and returns every problem found,
// joined; nil means the file is sound.
func (db *DB) Check() error {
	var errs []error
	err := db.view(func(tx *bolt.Tx) error {
		for e := range tx.Check() {
			errs = append(errs, e)
		}
		return nil
	})
	if err != nil {
		return err
	}
	if len(errs) > 0 {
		return fmt.Errorf("store: consistency check: %w", errors.Join(errs...))
	}
	return nil
}
