package main

import (
	"fmt"
	"math"
	"os"
	"path/filepath"
	"strings"
	"syscall"
	"testing"
	"time"

	"github.com/gridloupe/gridloupe/metrics"
	"github.com/gridloupe/gridloupe/stream/iio/iiotest"
)

// iioRig is a fake six-input IIO ADC whose character device is a FIFO fed
// by the test, and a config that reads it (counts · 1000 mV/1000 = volts at
// the input = the counts, then countsCfg's 0.02/0.01 per count).
type iioRig struct {
	tree *iiotest.Tree
	cfg  string
	db   string
	w    chan *os.File
}

func newIIORig(t *testing.T) *iioRig {
	t.Helper()
	dir := t.TempDir()
	var els []iiotest.Element
	for i := range 6 {
		els = append(els, iiotest.Element{Name: fmt.Sprintf("in_voltage%d", i), Type: "le:s16/16>>0"})
	}
	els = append(els, iiotest.Element{Name: "in_voltage6", Type: "le:s16/16>>0", Enabled: true}, // someone else's, enabled
		iiotest.Element{Name: "in_timestamp", Type: "le:s64/64>>0"})
	tr, err := iiotest.New(dir, "dc2-adc", 10240, els, map[string]string{"in_voltage_scale": "1000"})
	if err != nil {
		t.Fatal(err)
	}
	if err := syscall.Mkfifo(tr.Node, 0o600); err != nil {
		t.Skip("no FIFOs:", err)
	}
	c := countsCfg
	for i, n := range []string{"va", "vb", "vc", "ia", "ib", "ic"} {
		c = strings.Replace(c, "{name: "+n+",", fmt.Sprintf("{name: %s, iio: voltage%d,", n, i), 1)
	}
	r := &iioRig{tree: tr, db: filepath.Join(dir, "i.db"), w: make(chan *os.File, 1)}
	r.cfg = writeFile(t, dir, "i.yaml", c+fmt.Sprintf("source: {kind: iio, device: dc2-adc, sysfs: %s, dev: %s, buffer_length: 2048}\nstore: {path: %s, commit_every: 100ms}\n",
		tr.Sysfs, tr.Dev, r.db))
	go func() {
		f, err := os.OpenFile(tr.Node, os.O_WRONLY, 0) // waits for the daemon to open it
		if err != nil {
			f = nil
		}
		r.w <- f
	}()
	return r
}

// feed writes seconds of countSamples as scans with realtime stamps from
// t0, leaving out the scans in [skipFrom, skipFrom+skipN).
func (r *iioRig) feed(t *testing.T, seconds float64, t0 time.Time, skipFrom, skipN int) *os.File {
	t.Helper()
	var w *os.File
	select {
	case w = <-r.w:
	case <-time.After(10 * time.Second):
		t.Fatal("the daemon did not open the device")
	}
	if w == nil {
		t.Fatal("cannot open the FIFO")
	}
	vals := countSamples(seconds)
	var frames [][]int16
	var ts []int64
	for k := 0; k*6 < len(vals); k++ {
		if k >= skipFrom && k < skipFrom+skipN {
			continue
		}
		f := make([]int16, 6)
		for c := range f {
			f[c] = int16(vals[k*6+c])
		}
		frames = append(frames, f)
		ts = append(ts, t0.UnixNano()+int64(math.Round(float64(k)*1e9/10240)))
	}
	if _, err := w.Write(iiotest.S16Scans(frames, ts)); err != nil {
		t.Fatal(err)
	}
	return w
}

// checkRestored: the buffer is off and every _en is as before the run.
func (r *iioRig) checkRestored(t *testing.T) {
	t.Helper()
	if got := r.tree.Read("buffer/enable"); got != "0" {
		t.Errorf("buffer/enable = %q after run ended, want 0", got)
	}
	if got := r.tree.Read("buffer/length"); got != "128" {
		t.Errorf("buffer/length = %q after run ended, want 128 restored", got)
	}
	for i := range 6 {
		if got := r.tree.Read(fmt.Sprintf("scan_elements/in_voltage%d_en", i)); got != "0" {
			t.Errorf("in_voltage%d_en = %q after run ended, want 0 restored", i, got)
		}
	}
	if got := r.tree.Read("scan_elements/in_voltage6_en"); got != "1" {
		t.Errorf("in_voltage6_en = %q after run ended, want 1 restored", got)
	}
}

// TestRunIIOSignal: `run` on a fake IIO device stores what it measures,
// timed from the first scan's timestamp, a timestamp step as a gap; on
// SIGTERM (the device silent, its read blocked) it exits 0 within 5 s with
// the buffer disabled and the _en files restored.
func TestRunIIOSignal(t *testing.T) {
	r := newIIORig(t)
	p := startDaemon(t, "run", "--config", r.cfg, "--log-level", "warn")
	t0 := time.Date(2026, 3, 1, 10, 0, 0, 0, time.UTC)
	w := r.feed(t, 7, t0, 40000, 3000)
	defer w.Close()
	time.Sleep(3 * time.Second)
	if got := r.tree.Read("buffer/enable"); got != "1" {
		t.Errorf("buffer/enable = %q while running, want 1", got)
	}
	if err := p.cmd.Process.Signal(syscall.SIGTERM); err != nil {
		t.Fatal(err)
	}
	code, took := p.wait(t, 10*time.Second)
	if code != 0 || took > 5*time.Second {
		t.Fatalf("exit %d after %v, want 0 within 5 s; stderr:\n%s", code, took, p.stderr)
	}
	r.checkRestored(t)
	got := stored3s(t, r.db)
	gaps := 0
	for _, rec := range got {
		if rec.Flags&metrics.FlagGap != 0 {
			gaps++
		}
	}
	if len(got) < 2 || !got[0].Start.Equal(t0) || gaps != 1 {
		t.Errorf("%d stored 3 s records from %v, %d flagged gap; want records from the first timestamp %v and the hole flagged once",
			len(got), got[0].Start, gaps, t0)
	}
}

// TestRunIIOVanishes: a device that stops delivering mid-run ends `run`
// with a clear error and exit 1; what was measured is stored (the store
// opens) and the device is restored.
func TestRunIIOVanishes(t *testing.T) {
	r := newIIORig(t)
	p := startDaemon(t, "run", "--config", r.cfg, "--log-level", "warn")
	w := r.feed(t, 4, time.Date(2026, 3, 1, 10, 0, 0, 0, time.UTC), -1, 0)
	w.Close() // the driver goes away: end of file on the device
	code, _ := p.wait(t, 15*time.Second)
	if code != 1 || !strings.Contains(p.stderr.String(), "stopped delivering") {
		t.Fatalf("exit %d, want 1 naming the device that stopped; stderr:\n%s", code, p.stderr)
	}
	r.checkRestored(t)
	if got := stored3s(t, r.db); len(got) == 0 {
		t.Error("nothing stored from the 4 s measured before the device stopped")
	}
}
