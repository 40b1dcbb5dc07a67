package stream

import (
	"errors"
	"fmt"
	"testing"
	"time"

	"github.com/gridloupe/gridloupe/metrics"
)

// Window records for the Intervals tests: 10 cycles of an exact 50 Hz
// supply at 10 kHz, so every window lasts 0.2 s and holds 2000 samples and
// the expected counts below are plain arithmetic on the clock.
const (
	ivWinSamples = 2000
	ivWinS       = 0.2
	ivWin        = 200 * time.Millisecond
)

// ivRecords returns n window records starting at base, back to back.
func ivRecords(t *testing.T, s *metrics.Setup, base time.Time, n int) []*metrics.Record {
	t.Helper()
	out := make([]*metrics.Record, n)
	for i := range out {
		r := metrics.NewRecord(s)
		r.Interval = metrics.Int200ms
		r.Start = base.Add(time.Duration(i) * ivWin)
		r.DurationS = ivWinS
		r.Samples = ivWinSamples
		r.FreqHz = 50
		r.Channels[0].RMS = 230
		out[i] = r
	}
	return out
}

// ivLevel is what one emitted aggregate is checked against.
type ivLevel struct {
	interval metrics.Interval
	start    time.Time
	windows  int // windows aggregated (samples / ivWinSamples)
	partial  bool
}

func (l ivLevel) String() string {
	return fmt.Sprintf("%v at %s, %d windows, partial %v", l.interval, l.start.Format(time.TimeOnly+".0"), l.windows, l.partial)
}

// TestIntervals drives Intervals with window records on a known clock and
// checks every emitted 3 s and 10 min value: where it starts, how many
// windows it holds and whether it is flagged partial.
func TestIntervals(t *testing.T) {
	t.Parallel()
	s := setupOf(t, metrics.SinglePhase, 230, 0, false, []int{1},
		metrics.Channel{Name: "v", Kind: metrics.Voltage, Phase: 'a'})
	tick := time.Date(2026, 3, 1, 10, 0, 0, 0, time.UTC)
	offTick := tick.Add(8*time.Minute - 100*time.Millisecond) // 10:07:59.9
	cases := []struct {
		name    string
		base    time.Time
		n       int
		levels  []metrics.Interval
		flushed bool
		want    []ivLevel // a subsequence of what is emitted, in emission order
		n3      int       // number of 3 s values in total
		src     string
	}{
		{
			name: "start-up between ticks", base: offTick, n: 610, flushed: true,
			levels: []metrics.Interval{metrics.Int3s, metrics.Int10min}, n3: 42,
			want: []ivLevel{
				// windows k = 0…600 start before 10:10:00 (0.2·600 s = 120 s after 10:07:59.9 is 10:09:59.9):
				// 601 windows = 40 full 3 s blocks + 1 window cut by the tick
				{metrics.Int3s, offTick, 15, false},
				{metrics.Int3s, offTick.Add(40 * 15 * ivWin), 1, true},
				{metrics.Int10min, offTick, 601, true},
				// windows 601…609 open the next interval; Flush closes both, short
				{metrics.Int3s, offTick.Add(601 * ivWin), 9, true},
				{metrics.Int10min, offTick.Add(601 * ivWin), 9, true},
			},
			src: "DESIGN \"Time\": first interval after start-up partial, the 3 s block cut by a tick partial, the last at end of input partial; the window in progress at a tick belongs to the interval it started in",
		},
		{
			name: "second interval after start-up is full", base: offTick, n: 3602, flushed: true,
			levels: []metrics.Interval{metrics.Int10min}, n3: 0,
			want: []ivLevel{
				{metrics.Int10min, offTick, 601, true},
				// windows 601…3600 start in [10:10:00.1, 10:20:00): 3000 windows, the interval's full length
				{metrics.Int10min, offTick.Add(601 * ivWin), 3000, false},
				{metrics.Int10min, offTick.Add(3601 * ivWin), 1, true},
			},
			src: "DESIGN \"Time\": only the first interval after start-up is partial; the window in progress at a tick belongs to the interval it started in",
		},
		{
			name: "start on the tick", base: tick, n: 3001, flushed: true,
			levels: []metrics.Interval{metrics.Int3s, metrics.Int10min}, n3: 201,
			want: []ivLevel{
				// 600 s / 0.2 s = 3000 windows = 200 full 3 s blocks, no cut block
				{metrics.Int3s, tick, 15, false},
				{metrics.Int3s, tick.Add(199 * 15 * ivWin), 15, false},
				{metrics.Int10min, tick, 3000, false},
				{metrics.Int3s, tick.Add(10 * time.Minute), 1, true},
				{metrics.Int10min, tick.Add(10 * time.Minute), 1, true},
			},
			src: "DESIGN \"Time\": a start on the boundary is not partial; 10 min = 3000 windows of 0.2 s",
		},
		{
			name: "flush after exactly one interval", base: tick, n: 3000, flushed: true,
			levels: []metrics.Interval{metrics.Int3s, metrics.Int10min}, n3: 200,
			want: []ivLevel{
				{metrics.Int3s, tick.Add(199 * 15 * ivWin), 15, false},
				{metrics.Int10min, tick, 3000, false},
			},
			src: "DESIGN \"Time\": an interval that reached its full length is not partial, even when closed by the end of input",
		},
		{
			name: "no flush: the open interval stays open", base: tick, n: 3020, flushed: false,
			levels: []metrics.Interval{metrics.Int3s, metrics.Int10min}, n3: 201,
			want: []ivLevel{
				{metrics.Int10min, tick, 3000, false},
				// window 3000 opens 10:10:00; 20 windows = one full block + 5 open
				{metrics.Int3s, tick.Add(10 * time.Minute), 15, false},
			},
			src: "DESIGN \"Time\": 3 s values from 15 consecutive windows",
		},
		{
			name: "10 min only", base: offTick, n: 610, flushed: true,
			levels: []metrics.Interval{metrics.Int10min}, n3: 0,
			want: []ivLevel{
				{metrics.Int10min, offTick, 601, true},
				{metrics.Int10min, offTick.Add(601 * ivWin), 9, true},
			},
			src: "NewIntervals doc: only the levels asked for are emitted",
		},
	}
	for _, tc := range cases {
		t.Run(tc.name, func(t *testing.T) {
			t.Parallel()
			iv := NewIntervals(s, tc.levels...)
			var got []ivLevel
			emit := func(r *metrics.Record) error {
				if r.Interval == metrics.Int200ms {
					return nil
				}
				got = append(got, ivLevel{r.Interval, r.Start, int(r.Samples / ivWinSamples), r.Flags&metrics.FlagPartial != 0})
				if r.Samples%ivWinSamples != 0 {
					t.Errorf("%v value at %v: %d samples, not whole windows", r.Interval, r.Start, r.Samples)
				}
				return nil
			}
			for _, r := range ivRecords(t, s, tc.base, tc.n) {
				if err := iv.Add(r, emit); err != nil {
					t.Fatal(err)
				}
			}
			if tc.flushed {
				if err := iv.Flush(emit); err != nil {
					t.Fatal(err)
				}
			}
			n3 := 0
			for _, g := range got {
				if g.interval == metrics.Int3s {
					n3++
				}
			}
			if n3 != tc.n3 {
				t.Errorf("%d 3 s values, want %d (%s)", n3, tc.n3, tc.src)
			}
			// every wanted value appears, in the wanted order
			j := 0
			for _, g := range got {
				if j < len(tc.want) && g == tc.want[j] {
					j++
				}
			}
			if j < len(tc.want) {
				t.Errorf("missing or out of order: %v (%s)\ngot (10 min and non-full 3 s only):", tc.want[j], tc.src)
				for _, g := range got {
					if g.interval != metrics.Int3s || g.windows != 15 || g.partial {
						t.Logf("  %v", g)
					}
				}
			}
			// src: DESIGN "Time": a value is partial exactly when it holds less than its full length
			for _, g := range got {
				if g.interval == metrics.Int3s && g.partial != (g.windows != blockWindows) {
					t.Errorf("3 s value at %v with %d windows: partial %v", g.start, g.windows, g.partial)
				}
			}
		})
	}
}

// TestIntervalsTwoHundred: with 200ms asked for, every window record is
// passed through unchanged before the aggregates it completes.
func TestIntervalsTwoHundred(t *testing.T) {
	t.Parallel()
	s := setupOf(t, metrics.SinglePhase, 230, 0, false, []int{1},
		metrics.Channel{Name: "v", Kind: metrics.Voltage, Phase: 'a'})
	base := time.Date(2026, 3, 1, 10, 0, 0, 0, time.UTC)
	iv := NewIntervals(s, metrics.Int200ms, metrics.Int3s)
	var order []metrics.Interval
	for _, r := range ivRecords(t, s, base, 15) {
		if err := iv.Add(r, func(r *metrics.Record) error { order = append(order, r.Interval); return nil }); err != nil {
			t.Fatal(err)
		}
	}
	// src: README "replay" --interval 200ms prints each window; the 3 s value follows the 15th (DESIGN "Time")
	if len(order) != 16 || order[14] != metrics.Int200ms || order[15] != metrics.Int3s {
		t.Fatalf("emitted %v, want 15 × 200ms then 3s", order)
	}
}

// TestIntervalsEmitError: an error from emit stops Add and Flush and is
// returned as is.
func TestIntervalsEmitError(t *testing.T) {
	t.Parallel()
	s := setupOf(t, metrics.SinglePhase, 230, 0, false, []int{1},
		metrics.Channel{Name: "v", Kind: metrics.Voltage, Phase: 'a'})
	base := time.Date(2026, 3, 1, 10, 0, 0, 0, time.UTC)
	boom := errors.New("sink full")
	iv := NewIntervals(s, metrics.Int3s, metrics.Int10min)
	fail := func(*metrics.Record) error { return boom }
	var err error
	for _, r := range ivRecords(t, s, base, 15) {
		if err = iv.Add(r, fail); err != nil {
			break
		}
	}
	// src: Intervals.Add doc (errors from emit are returned); common practice, no source
	if !errors.Is(err, boom) {
		t.Fatalf("Add: %v, want the emit error", err)
	}
	if err := iv.Flush(fail); !errors.Is(err, boom) {
		t.Fatalf("Flush: %v, want the emit error", err)
	}
}

// ivTenMin is a stored 10 min record of w windows starting at start, as a
// restarted run reads it back from the store.
func ivTenMin(s *metrics.Setup, start time.Time, w int, partial bool) *metrics.Record {
	r := metrics.NewRecord(s)
	r.Interval = metrics.Int10min
	r.Start = start
	r.DurationS = float64(w) * ivWinS
	r.Samples = uint64(w * ivWinSamples)
	r.FreqHz = 50
	r.Channels[0].RMS = 230
	if partial {
		r.Flags |= metrics.FlagPartial
	}
	return r
}

// TestIntervalsTwoHour drives the 2 h level with window records (and, for
// a restart, stored 10 min values) and checks every 2 h value emitted:
// start, windows held and the flag partial.
func TestIntervalsTwoHour(t *testing.T) {
	t.Parallel()
	s := setupOf(t, metrics.SinglePhase, 230, 0, false, []int{1},
		metrics.Channel{Name: "v", Kind: metrics.Voltage, Phase: 'a'})
	day := time.Date(2026, 3, 1, 0, 0, 0, 0, time.UTC)
	const per10 = 3000 // windows of 0.2 s in 10 min
	const per2hW = per2h * per10
	oddHour := day.Add(time.Hour) // on a 1 h tick, not on a 2 h one
	mid := day.Add(2*time.Hour + 37*time.Minute + 12200*time.Millisecond)
	cases := []struct {
		name    string
		base    time.Time
		n       int
		seed    []*metrics.Record // stored 10 min values before base
		skip    bool              // the 2 h value of base's interval is stored
		suspend bool              // end with Suspend instead of Flush
		want    []ivLevel         // every 2 h value, in order
		src     string
	}{
		{
			name: "start on an even UTC hour", base: day.Add(2 * time.Hour), n: per2hW + 5,
			want: []ivLevel{
				{metrics.Int2h, day.Add(2 * time.Hour), per2hW, false},
				{metrics.Int2h, day.Add(4 * time.Hour), 5, true},
			},
			src: "IEC 61000-4-30 (2 h values on the clock, from twelve 10 min values, from memory); DESIGN \"Time\": a start on the boundary is not partial, the last at end of input is",
		},
		{
			name: "start on an odd hour: the first closes at the next even hour", base: oddHour, n: per2hW/2 + per2hW,
			want: []ivLevel{
				{metrics.Int2h, oddHour, per2hW / 2, true},
				{metrics.Int2h, day.Add(2 * time.Hour), per2hW, false},
			},
			src: "DESIGN \"Time\": 2 h intervals start on wall-clock ticks (even UTC hours, Tick since the epoch); the first after start-up is partial",
		},
		{
			name: "start mid-interval", base: mid, n: 24839 + per2hW,
			want: []ivLevel{
				// 04:00:00 − 02:37:12.2 = 4967.8 s = 24839 windows; the last window ends on 06:00, so Flush closes a full one
				{metrics.Int2h, mid, 24839, true},
				{metrics.Int2h, mid.Add(24839 * ivWin), per2hW, false},
			},
			src: "DESIGN \"Time\": the first interval after start-up is partial, the second full; 4967.8 s / 0.2 s = 24839 windows",
		},
		{
			name: "Flush emits the open 2 h value partial", base: day, n: 100,
			want: []ivLevel{{metrics.Int2h, day, 100, true}},
			src:  "DESIGN \"Time\": the last value when a replay's input ends is partial",
		},
		{
			name: "Suspend keeps the open 2 h value back", base: day, n: per10 + 100, suspend: true,
			want: nil,
			src:  "Intervals.Suspend doc: the next run rebuilds the open 2 h value from the store",
		},
		{
			name: "restart: stored 10 min values seed the interval", base: day.Add(44 * time.Minute), n: (120 - 44) * per10 / 10,
			seed: []*metrics.Record{
				ivTenMin(s, day, per10, false), ivTenMin(s, day.Add(10*time.Minute), per10, false),
				ivTenMin(s, day.Add(20*time.Minute), per10, false), ivTenMin(s, day.Add(30*time.Minute), per10, false),
				ivTenMin(s, day.Add(40*time.Minute), 1200, true), // the run stopped at 00:44
			},
			want: []ivLevel{
				// 4 full + 1200 stored, then 00:44 → 02:00 of windows: 13 values in twelve slots
				{metrics.Int2h, day, 4*per10 + 1200 + (120-44)*per10/10, true},
			},
			src: "DESIGN \"Time\": a restart mid-interval gives a partial value; the value closes with the last slot, not the twelfth record (common practice, no source)",
		},
		{
			name: "a 10 min value missing: partial though seen from its start", base: day.Add(50 * time.Minute), n: 7 * per10,
			seed: []*metrics.Record{
				ivTenMin(s, day, per10, false), ivTenMin(s, day.Add(10*time.Minute), per10, false),
				ivTenMin(s, day.Add(20*time.Minute), per10, false), ivTenMin(s, day.Add(30*time.Minute), per10, false),
				// 00:40 never stored (the gateway was off), the run starts on the 00:50 tick
			},
			want: []ivLevel{
				{metrics.Int2h, day, 11 * per10, true}, // 4 stored + 7 run values: eleven of twelve
			},
			src: "DESIGN \"Time\" (a value holding less than its full length is partial; 2 h from the twelve 10 min values) and the Intervals doc (a 2 h value missing any of its twelve 10 min values)",
		},
		{
			name: "restart in the last slot of a stored interval", base: day.Add(116 * time.Minute), n: 4*per10/10 + per10 + 10, skip: true,
			want: []ivLevel{
				{metrics.Int2h, day.Add(2 * time.Hour), per10 + 10, true}, // open at Flush
			},
			src: "DESIGN \"Time\" (one 2 h value per interval; common practice, no source): the stored interval gets no second value; the next opens on its tick",
		},
	}
	for _, tc := range cases {
		t.Run(tc.name, func(t *testing.T) {
			t.Parallel()
			iv := NewIntervals(s, metrics.Int2h)
			var got []ivLevel
			emit := func(r *metrics.Record) error {
				if r.Interval != metrics.Int2h {
					t.Errorf("%v value emitted, only 2h asked for", r.Interval)
				}
				got = append(got, ivLevel{r.Interval, r.Start, int(r.Samples / ivWinSamples), r.Flags&metrics.FlagPartial != 0})
				return nil
			}
			if tc.skip {
				iv.SkipTwoHour(tc.base)
			}
			for _, r := range tc.seed {
				if err := iv.Seed(r, emit); err != nil {
					t.Fatal(err)
				}
			}
			for _, r := range ivRecords(t, s, tc.base, tc.n) {
				if err := iv.Add(r, emit); err != nil {
					t.Fatal(err)
				}
			}
			end := iv.Flush
			if tc.suspend {
				end = iv.Suspend
			}
			if err := end(emit); err != nil {
				t.Fatal(err)
			}
			if fmt.Sprint(got) != fmt.Sprint(tc.want) {
				t.Errorf("2 h values (%s):\ngot  %v\nwant %v", tc.src, got, tc.want)
			}
		})
	}
}
