package compliance

import (
	"math"
	"testing"
	"time"

	"github.com/gridloupe/gridloupe/metrics"
)

// feedDay feeds n 3 s values of duration durS into day 0, the first
// partial ones flagged partial, and returns the result.
func feedDay(t *testing.T, n, partial int, durS float64) *Result {
	t.Helper()
	s := newSetup(t, "a", nwIL, 1, 5, 7)
	e := newEval(t, s)
	sy := newSynth(s)
	step := time.Duration(durS * float64(time.Second))
	for i := range n {
		r := sy.fill(metrics.Int3s, weekStart.Add(time.Duration(i)*step))
		r.DurationS = durS
		if i < partial {
			r.Flags |= metrics.FlagPartial
		}
		if err := e.Add(r); err != nil {
			t.Fatal(err)
		}
	}
	return e.Result()
}

// TestCoverageNeverAbove100: at 50.055 Hz a 3 s value (15 windows of 10
// cycles) lasts 150/50.055 = 2.99670 s, so 28,832 whole values start in a
// day (86,400/2.99670 = 28,831.6); coverage counts their time against the
// day's and stays at 100 %, where a count against 28,800 read 100.1 %.
func TestCoverageNeverAbove100(t *testing.T) {
	t.Parallel()
	dur := 150 / 50.055 // src: closed form, 15 × 10 cycles at 50.055 Hz
	res := feedDay(t, 28832, 0, dur)
	d := res.Days[0]
	if d.Coverage > 1 || d.Coverage < 0.9999 || !d.Complete || d.Used != 28832 {
		t.Errorf("day %+v; want coverage 1 (28832 × %.5f s = %.0f s, capped at 86400 s), complete", d, dur, 28832*dur)
	}
	l := findLine(t, res, "va", "h5", DailyP99)
	// hand: one of seven days covered
	if l.Coverage > 1.0/7+1e-9 || l.Coverage < 1.0/7-1e-4 || l.DaysJudged != 1 {
		t.Errorf("line coverage %v over %d days judged, want 1/7 and 1", l.Coverage, l.DaysJudged)
	}
}

// TestPartialNotCounted: the 144 3 s blocks a day's 10-minute ticks cut
// short are partial (DESIGN "Time") and neither used nor counted: 28,656
// whole values of 3 s cover 85,968 s of 86,400 s = 99.5 %.
func TestPartialNotCounted(t *testing.T) {
	t.Parallel()
	res := feedDay(t, 28656+144, 144, 3)
	d := res.Days[0]
	want := 28656 * 3.0 / 86400 // src: hand
	if d.Partial != 144 || d.Used != 28656 || math.Abs(d.Coverage-want) > 1e-12 {
		t.Errorf("day %+v; want 144 partial, 28656 used, coverage %v", d, want)
	}
}

// TestNoData: days without records say so (NoData), their lines hold no
// values, and nothing passes.
func TestNoData(t *testing.T) {
	t.Parallel()
	res := feedDay(t, 10, 0, 3)
	if res.Days[0].NoData() || !res.Days[1].NoData() || !res.Week.NoData() {
		t.Errorf("NoData: day 0 %v, day 1 %v, week %v; want false, true, true", res.Days[0].NoData(), res.Days[1].NoData(), res.Week.NoData())
	}
	l := findLine(t, res, "va", "h5", WeeklyP95)
	if l.Values != 0 || !math.IsNaN(l.Value) || l.Coverage != 0 || l.Verdict != Incomplete {
		t.Errorf("weekly line without 10 min values %+v; want no values, NaN, coverage 0, incomplete", l)
	}
}
