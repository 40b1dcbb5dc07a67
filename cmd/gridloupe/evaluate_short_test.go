package main

import (
	"regexp"
	"strconv"
	"strings"
	"testing"
	"time"

	"github.com/gridloupe/gridloupe/metrics"
)

// buildShortStore stores two hours of values, 2026-03-05 00:00 to 02:00
// (2,400 3 s values, the first flagged partial, and 12 10 min values): a
// store younger than its first midnight.
func buildShortStore(t *testing.T) (string, string) {
	t.Helper()
	cfgPath, dbPath, setup, db := newEvalStore(t, evalCfgFew)
	defer db.Close()
	day := time.Date(2026, 3, 5, 0, 0, 0, 0, time.UTC)
	var recs []*metrics.Record
	for i := range 2400 {
		r := metrics.NewRecord(setup)
		fillEvalRecord(setup, r, metrics.Int3s, day.Add(time.Duration(i)*3*time.Second), 3)
		if i == 0 {
			r.Flags |= metrics.FlagPartial
		}
		recs = append(recs, r)
	}
	for i := range 12 {
		r := metrics.NewRecord(setup)
		fillEvalRecord(setup, r, metrics.Int10min, day.Add(time.Duration(i)*10*time.Minute), 3)
		recs = append(recs, r)
	}
	if err := db.PutAggregates(recs); err != nil {
		t.Fatal(err)
	}
	return cfgPath, dbPath
}

var pctRe = regexp.MustCompile(`([0-9]+\.[0-9])%`)

// TestEvaluateShortStore: on a store holding two hours, the default week
// is the 7 days ending at the midnight after the data (README "Weekly
// IEEE 519 evaluation"), the days without records read "no data" instead
// of 0.0 %, the one partial 3 s value is not counted, no coverage exceeds
// 100 %, and each line carries its own coverage and days judged.
func TestEvaluateShortStore(t *testing.T) {
	t.Parallel()
	cfgPath, dbPath := buildShortStore(t)
	r := runCmd("evaluate", "--config", cfgPath, "--store", dbPath)
	if r.code != 0 {
		t.Fatalf("exit %d: %s", r.code, r.stderr)
	}
	out := r.stdout
	for _, want := range []string{
		"week 2026-02-27T00:00:00Z to 2026-03-06T00:00:00Z", // our rule: the last 7 days that hold data
		"2026-02-27 3s        -       -        -        -   no data  incomplete",
		// hand: 2,399 whole values × 3 s = 7,197 s of 86,400 s = 8.3 %
		"2026-03-05 3s     2399       0        0        1      8.3%  incomplete",
		// hand: 12 × 600 s = 7,200 s of 7 days = 1.2 %
		"week 10min         12       0        0        0      1.2%  incomplete",
		"0/7", // no day judged
	} {
		if !strings.Contains(out, want) {
			t.Errorf("report lacks %q:\n%s", want, out)
		}
	}
	for _, m := range pctRe.FindAllStringSubmatch(out, -1) {
		if v, _ := strconv.ParseFloat(m[1], 64); v > 100 {
			t.Errorf("coverage %s%% above 100 %%", m[1])
		}
	}

	// a week without any record: every day and line says no data, and no
	// harmonic line is singled out as "closest to its threshold"
	r = runCmd("evaluate", "--config", cfgPath, "--store", dbPath, "--from", "2026-01-05T00:00:00Z")
	if r.code != 0 {
		t.Fatalf("exit %d: %s", r.code, r.stderr)
	}
	if n := strings.Count(r.stdout, "no data  incomplete"); n != 8 {
		t.Errorf("%d periods read no data, want 7 days and the week:\n%s", n, r.stdout)
	}
	if strings.Contains(r.stdout, " h5 ") || strings.Contains(r.stdout, " h7 ") || strings.Contains(r.stdout, "0.0%") {
		t.Errorf("a week without data shows a harmonic line or a 0.0 %% coverage:\n%s", r.stdout)
	}
}
