package stream

import (
	"time"

	"github.com/gridloupe/gridloupe/metrics"
)

// blockWindows is the number of 10/12-cycle windows in a 3 s value
// (IEC 61000-4-30: 150/180 cycles).
const blockWindows = 15

// tenMin and twoHours are the clock intervals of the 10 min and 2 h values.
const (
	tenMin   = 10 * time.Minute
	twoHours = 2 * time.Hour
)

// per2h is the number of 10 min values in a 2 h value (IEC 61000-4-30).
const per2h = 12

// Intervals turns window records into 3 s, 10 min and 2 h aggregates on
// the clock rules of DESIGN's "Time" section: 3 s values from 15
// consecutive windows; 10 min values from the windows that start inside a
// wall-clock 10-minute interval (…:00, …:10, …), the window in progress at
// a tick belonging to the interval it started in; a 3 s block cut short by
// a tick is emitted early; 2 h values from the 10 min values that start
// inside a wall-clock 2-hour interval (00:00, 02:00, … UTC), emitted with
// the 10 min value of the interval's last slot. An interval holding less
// than its full length carries the flag partial: the first 10 min or 2 h
// after start-up (unless the start falls on its tick), a 3 s block cut by a
// tick, a 2 h value missing any of its twelve 10 min values, and whatever
// is open when Flush is called at the end of the input. The arithmetic is
// metrics.Aggregator's; the three levels share the type level. Not safe
// for concurrent use.
type Intervals struct {
	want200, want3, want10, want2h bool

	l3, l10, l2h level
	done2h       int64 // a 2 h interval whose value was stored before a restart
	lastEnd      time.Time
	out, out2h   *metrics.Record
}

// level is one aggregation level: the open interval's aggregator, its
// start and the number of records in it. A clock level (d > 0) also keeps
// the wall-clock interval it is in (Tick of its first record) and whether
// it is seen from its start: opened on its tick, or not the first interval
// since start-up.
type level struct {
	d      time.Duration // clock interval; 0 for the 3 s level (counted windows)
	a      *metrics.Aggregator
	start  time.Time
	n      int
	tick   int64
	full   bool
	opened bool
}

func newLevel(s *metrics.Setup, d time.Duration) level {
	return level{d: d, a: metrics.NewAggregator(s)}
}

// leaves reports whether a record starting at t belongs to another clock
// interval than the open one.
func (l *level) leaves(t time.Time) bool {
	return l.n > 0 && Tick(t, l.d) != l.tick
}

// add aggregates r, opening an interval when none is open.
func (l *level) add(r *metrics.Record) {
	if l.n == 0 {
		l.start = r.Start
		if l.d > 0 {
			l.tick = Tick(r.Start, l.d)
			l.full = l.opened || r.Start.UnixNano()%int64(l.d) == 0
			l.opened = true
		}
	}
	l.a.Add(r)
	l.n++
}

// end is the tick that closes the open clock interval.
func (l *level) end() time.Time { return time.Unix(0, (l.tick+1)*int64(l.d)) }

// NewIntervals returns aggregation for the levels to emit (any of 200ms,
// 3s, 10min and 2h; the 2 h level aggregates the 10 min values whether or
// not they are emitted).
func NewIntervals(s *metrics.Setup, levels ...metrics.Interval) *Intervals {
	iv := &Intervals{l3: newLevel(s, 0), l10: newLevel(s, tenMin), done2h: -1 << 62, out: metrics.NewRecord(s)}
	for _, l := range levels {
		switch l {
		case metrics.Int200ms:
			iv.want200 = true
		case metrics.Int3s:
			iv.want3 = true
		case metrics.Int10min:
			iv.want10 = true
		case metrics.Int2h:
			iv.want2h = true
		}
	}
	if iv.want2h {
		iv.l2h, iv.out2h = newLevel(s, twoHours), metrics.NewRecord(s)
	}
	return iv
}

// Tick returns the index of the wall-clock interval of length d that holds
// t (floor of t/d since the Unix epoch, also before 1970).
func Tick(t time.Time, d time.Duration) int64 {
	ns := t.UnixNano()
	q := ns / int64(d)
	if ns%int64(d) < 0 {
		q--
	}
	return q
}

// Add takes one window record and emits whatever intervals it completes,
// in time order. The record is not kept.
func (iv *Intervals) Add(r *metrics.Record, emit func(*metrics.Record) error) error {
	if iv.l10.leaves(r.Start) {
		if err := iv.close3(true, emit); err != nil {
			return err
		}
		if err := iv.close10(!iv.l10.full, emit); err != nil {
			return err
		}
	}
	if iv.want200 {
		if err := emit(r); err != nil {
			return err
		}
	}
	iv.l3.add(r)
	iv.l10.add(r)
	iv.lastEnd = r.Start.Add(time.Duration(r.DurationS * float64(time.Second)))
	if iv.l3.n == blockWindows {
		return iv.close3(false, emit)
	}
	return nil
}

// Seed adds a stored 10 min record to the 2 h level (a restart
// mid-interval reloads the interval's earlier 10 min values from the
// store, so the 2 h value loses none of them). Seeded records are not
// emitted again; a 2 h value they complete is.
func (iv *Intervals) Seed(r *metrics.Record, emit func(*metrics.Record) error) error {
	if !iv.want2h {
		return nil
	}
	return iv.add2h(r, emit)
}

// SkipTwoHour tells that the 2 h value of the clock interval holding t is
// already stored (the previous run closed it in the interval's last slot):
// the 10 min values of that interval are not aggregated into a second one.
func (iv *Intervals) SkipTwoHour(t time.Time) { iv.done2h = Tick(t, twoHours) }

// Flush emits the intervals still open at the end of the input, flagged
// partial unless they had reached their full length.
func (iv *Intervals) Flush(emit func(*metrics.Record) error) error {
	if err := iv.close310(emit); err != nil {
		return err
	}
	return iv.close2h(emit)
}

// Suspend is Flush for a run that resumes later on the same store: the
// open 3 s and 10 min values are emitted as by Flush, the open 2 h value is
// dropped, not emitted, for the next run to rebuild with Seed.
func (iv *Intervals) Suspend(emit func(*metrics.Record) error) error {
	err := iv.close310(emit)
	iv.l2h.reset()
	return err
}

// close310 emits the open 3 s and 10 min values at the end of the input.
func (iv *Intervals) close310(emit func(*metrics.Record) error) error {
	if err := iv.close3(true, emit); err != nil {
		return err
	}
	// DurationS converts to nanoseconds with rounding; a microsecond of
	// slack keeps a window ending exactly on the tick from reading as short.
	end := iv.l10.end().Add(-time.Microsecond)
	return iv.close10(!iv.l10.full || iv.lastEnd.Before(end), emit)
}

func (iv *Intervals) close3(partial bool, emit func(*metrics.Record) error) error {
	if iv.l3.n == 0 {
		return nil
	}
	if !iv.want3 {
		iv.l3.reset()
		return nil
	}
	return emitLevel(&iv.l3, iv.out, metrics.Int3s, partial, emit)
}

// close10 emits the open 10 min value, when wanted, and adds it to the 2 h
// level.
func (iv *Intervals) close10(partial bool, emit func(*metrics.Record) error) error {
	if iv.l10.n == 0 {
		return nil
	}
	if !iv.want10 && !iv.want2h {
		iv.l10.reset()
		return nil
	}
	emit10 := emit
	if !iv.want10 {
		emit10 = func(*metrics.Record) error { return nil }
	}
	if err := emitLevel(&iv.l10, iv.out, metrics.Int10min, partial, emit10); err != nil {
		return err
	}
	return iv.Seed(iv.out, emit)
}

// add2h adds a 10 min record to its 2 h interval, emitting the previous
// interval when the record opens a new one.
func (iv *Intervals) add2h(r *metrics.Record, emit func(*metrics.Record) error) error {
	l := &iv.l2h
	if Tick(r.Start, twoHours) == iv.done2h {
		return nil // its 2 h value was stored before a restart
	}
	if l.leaves(r.Start) {
		if err := iv.close2h(emit); err != nil {
			return err
		}
	}
	l.add(r)
	// The 10 min value in the interval's last slot closes it. (Counting to
	// twelve would close too early after a restart mid-interval, when the
	// slot cut by the restart holds two partial 10 min values.)
	if !r.Start.Add(tenMin).Before(l.end()) {
		return iv.close2h(emit)
	}
	return nil
}

// close2h emits the open 2 h value, flagged partial unless it holds twelve
// 10 min values of an interval seen from its start.
func (iv *Intervals) close2h(emit func(*metrics.Record) error) error {
	l := &iv.l2h
	if l.n == 0 {
		return nil
	}
	return emitLevel(l, iv.out2h, metrics.Int2h, !(l.full && l.n == per2h), emit)
}

func (l *level) reset() {
	if l.a != nil {
		l.a.Reset()
	}
	l.n = 0
}

// emitLevel writes a level's result into out, emits it and resets the
// level.
func emitLevel(l *level, out *metrics.Record, iv metrics.Interval, partial bool, emit func(*metrics.Record) error) error {
	defer l.reset()
	l.a.Result(out)
	out.Interval = iv
	out.Start = l.start
	if partial {
		out.Flags |= metrics.FlagPartial
	}
	return emit(out)
}
