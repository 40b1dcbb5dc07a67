package stream

import (
	"time"

	"github.com/gridloupe/gridloupe/metrics"
)

// blockWindows is the number of 10/12-cycle windows in a 3 s value
// (IEC 61000-4-30: 150/180 cycles).
const blockWindows = 15

// tenMin is the 10-minute clock interval.
const tenMin = 10 * time.Minute

// Intervals turns window records into 3 s and 10 min aggregates on the
// clock rules of DESIGN's "Time" section: 3 s values from 15 consecutive
// windows; 10 min values from the windows that start inside a wall-clock
// 10-minute interval (…:00, …:10, …), the window in progress at a tick
// belonging to the interval it started in; a 3 s block cut short by a tick
// is emitted early. An interval holding less than its full length carries
// the flag partial: the first 10 min after start-up (unless the start falls
// on a tick), a 3 s block cut by a tick, and whatever is open when Flush is
// called at the end of the input. The arithmetic is metrics.Aggregator's.
// Not safe for concurrent use.
type Intervals struct {
	want200, want3, want10 bool

	a3, a10 *metrics.Aggregator
	n3      int
	start3  time.Time
	start10 time.Time
	tick10  int64
	full10  bool
	opened  bool // an interval has been opened since start-up
	lastEnd time.Time
	out     *metrics.Record
}

// NewIntervals returns aggregation for the levels to emit (any of 200ms, 3s
// and 10min; 2 h values are built from stored 10 min records).
func NewIntervals(s *metrics.Setup, levels ...metrics.Interval) *Intervals {
	iv := &Intervals{a3: metrics.NewAggregator(s), a10: metrics.NewAggregator(s), out: metrics.NewRecord(s)}
	for _, l := range levels {
		switch l {
		case metrics.Int200ms:
			iv.want200 = true
		case metrics.Int3s:
			iv.want3 = true
		case metrics.Int10min:
			iv.want10 = true
		}
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
	tick := Tick(r.Start, tenMin)
	if iv.a10.Count() > 0 && tick != iv.tick10 {
		if err := iv.close3(true, emit); err != nil {
			return err
		}
		if err := iv.close10(!iv.full10, emit); err != nil {
			return err
		}
	}
	if iv.a10.Count() == 0 {
		iv.tick10 = tick
		iv.start10 = r.Start
		iv.full10 = iv.opened || r.Start.UnixNano()%int64(tenMin) == 0
		iv.opened = true
	}
	if iv.want200 {
		if err := emit(r); err != nil {
			return err
		}
	}
	if iv.n3 == 0 {
		iv.start3 = r.Start
	}
	iv.a3.Add(r)
	iv.n3++
	iv.a10.Add(r)
	iv.lastEnd = r.Start.Add(time.Duration(r.DurationS * float64(time.Second)))
	if iv.n3 == blockWindows {
		return iv.close3(false, emit)
	}
	return nil
}

// Flush emits the intervals still open at the end of the input, flagged
// partial unless they had reached their full length.
func (iv *Intervals) Flush(emit func(*metrics.Record) error) error {
	if err := iv.close3(true, emit); err != nil {
		return err
	}
	// DurationS converts to nanoseconds with rounding; a microsecond of
	// slack keeps a window ending exactly on the tick from reading as short.
	end := time.Unix(0, (iv.tick10+1)*int64(tenMin)).Add(-time.Microsecond)
	return iv.close10(!iv.full10 || iv.lastEnd.Before(end), emit)
}

func (iv *Intervals) close3(partial bool, emit func(*metrics.Record) error) error {
	if iv.n3 == 0 {
		return nil
	}
	iv.n3 = 0
	return iv.emitLevel(iv.a3, iv.want3, metrics.Int3s, iv.start3, partial, emit)
}

func (iv *Intervals) close10(partial bool, emit func(*metrics.Record) error) error {
	if iv.a10.Count() == 0 {
		return nil
	}
	return iv.emitLevel(iv.a10, iv.want10, metrics.Int10min, iv.start10, partial, emit)
}

// emitLevel emits an aggregator's result, when the level is wanted, and
// resets it.
func (iv *Intervals) emitLevel(a *metrics.Aggregator, want bool, l metrics.Interval, start time.Time,
	partial bool, emit func(*metrics.Record) error) error {
	defer a.Reset()
	if !want {
		return nil
	}
	a.Result(iv.out)
	iv.out.Interval = l
	iv.out.Start = start
	if partial {
		iv.out.Flags |= metrics.FlagPartial
	}
	return emit(iv.out)
}
