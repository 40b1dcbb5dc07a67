package main

import (
	"bytes"
	"encoding/json"
	"errors"
	"fmt"
	"io"
	"os"
	"os/exec"
	"path/filepath"
	"strings"
	"sync"
	"syscall"
	"testing"
	"time"

	"github.com/gridloupe/gridloupe/metrics"
	"github.com/gridloupe/gridloupe/store"
	"github.com/gridloupe/gridloupe/stream/mqtt/mqtttest"
)

// TestMain lets the test binary act as the gridloupe command, so daemon
// tests run the real process (signals, exit codes, SIGKILL) without a
// separate build step.
func TestMain(m *testing.M) {
	if os.Getenv("GRIDLOUPE_AS_MAIN") == "1" {
		main()
		os.Exit(0)
	}
	os.Exit(m.Run())
}

// daemonConfig: a single-phase simulated cabinet at 60× real time with an
// alarm that raises within seconds and stays raised (the simulated current
// THD is about 40 %; the rule's 20 % is a test threshold, common practice,
// no source).
func daemonConfig(t *testing.T, dir, broker string) string {
	t.Helper()
	cfg := fmt.Sprintf(`site: test-bench
gateway: gw-test
nominal: {frequency_hz: 50, voltage_v: 230, current_a: 160}
wiring: single-phase
sample_rate_hz: 6400
harmonics: all
il_a: 160
isc_a: 6100
channels:
  - {name: va, kind: voltage, phase: a}
  - {name: ia, kind: current, phase: a}
source: {kind: sim, speed: 60}
store: {path: %s, commit_every: 1s}
mqtt: {broker: %q, telemetry: [3s]}
alarms:
  - {name: ia-distortion, metric: thd_h50_pct, channel: ia, level: 3s, above: 20,
     deadband: 1, on_delay: 6s, off_delay: 6s, severity: warning}
`, filepath.Join(dir, "gl.db"), broker)
	return writeFile(t, dir, "gw.yaml", cfg)
}

type proc struct {
	cmd    *exec.Cmd
	stderr *lockedBuffer
	done   chan error
}

// lockedBuffer collects a child's stderr; exec's copying goroutine writes
// it while the test reads it, so both sides take the lock.
type lockedBuffer struct {
	mu  sync.Mutex
	buf bytes.Buffer
}

func (b *lockedBuffer) Write(p []byte) (int, error) {
	b.mu.Lock()
	defer b.mu.Unlock()
	return b.buf.Write(p)
}

func (b *lockedBuffer) String() string {
	b.mu.Lock()
	defer b.mu.Unlock()
	return b.buf.String()
}

func startDaemon(t *testing.T, args ...string) *proc {
	t.Helper()
	return startDaemonStdin(t, nil, args...)
}

// startDaemonStdin is startDaemon with standard input read from stdin (nil: none).
func startDaemonStdin(t *testing.T, stdin io.Reader, args ...string) *proc {
	t.Helper()
	cmd := exec.Command(os.Args[0], args...)
	cmd.Env = append(os.Environ(), "GRIDLOUPE_AS_MAIN=1")
	cmd.Stdin = stdin
	p := &proc{cmd: cmd, stderr: new(lockedBuffer), done: make(chan error, 1)}
	cmd.Stderr = p.stderr
	if err := cmd.Start(); err != nil {
		t.Fatal(err)
	}
	go func() { p.done <- cmd.Wait() }()
	t.Cleanup(func() {
		if cmd.ProcessState == nil {
			cmd.Process.Kill()
			<-p.done
		}
	})
	return p
}

func (p *proc) wait(t *testing.T, timeout time.Duration) (int, time.Duration) {
	t.Helper()
	start := time.Now()
	select {
	case err := <-p.done:
		code := 0
		var ee *exec.ExitError
		if errors.As(err, &ee) {
			code = ee.ExitCode()
		} else if err != nil {
			t.Fatal(err)
		}
		return code, time.Since(start)
	case <-time.After(timeout):
		t.Fatalf("process did not exit within %v; stderr:\n%s", timeout, p.stderr)
	}
	return -1, 0
}

type payload map[string]any

func decode(t *testing.T, m mqtttest.Message) payload {
	t.Helper()
	var p payload
	if err := json.Unmarshal(m.Payload, &p); err != nil {
		t.Fatalf("%s: payload is not JSON: %v: %.200s", m.Topic, err, m.Payload)
	}
	return p
}

func count(msgs []mqtttest.Message, topic string, match func(payload) bool) int {
	n := 0
	for _, m := range msgs {
		if m.Topic != topic {
			continue
		}
		var p payload
		if json.Unmarshal(m.Payload, &p) != nil {
			continue
		}
		if match == nil || match(p) {
			n++
		}
	}
	return n
}

// TestDaemonKillAndRestart runs the gateway against a real mosquitto with
// an independent subscriber: status, telemetry and alarm payloads arrive as
// documented; SIGKILL mid-run makes the broker publish the Last Will
// `offline`; the store passes bbolt's consistency check; the restarted
// process neither raises the still-active alarm again nor overlaps stored
// aggregates; SIGTERM ends it with `offline` and exit 0 within 5 s.
func TestDaemonKillAndRestart(t *testing.T) {
	if testing.Short() {
		t.Skip("runs two daemon processes for ~20 s")
	}
	mosq := mqtttest.Start(t)
	base := "gridloupe/test-bench/gw-test"
	sub := mqtttest.Subscribe(t, mosq.URL(), base+"/#")
	dir := t.TempDir()
	cfg := daemonConfig(t, dir, mosq.URL())

	p1 := startDaemon(t, "run", "--config", cfg)
	msgs := sub.WaitFor(t, "online, telemetry and a raised alarm", 60*time.Second, func(m []mqtttest.Message) bool {
		return count(m, base+"/status", func(p payload) bool { return p["status"] == "online" }) >= 1 &&
			count(m, base+"/telemetry/3s", nil) >= 5 &&
			count(m, base+"/alarm", func(p payload) bool { return p["state"] == "raised" }) >= 1
	})
	// documented payload shapes (README "MQTT topics and payloads")
	for _, m := range msgs {
		p := decode(t, m)
		switch {
		case m.Topic == base+"/status":
			if !m.Retained && p["status"] == "online" {
				// live delivery of a retained message arrives unflagged (MQTT 3.1.1 §3.3.1.3): fine
			}
		case m.Topic == base+"/telemetry/3s":
			for _, k := range []string{"seq", "site", "gateway", "interval", "start", "freq_hz", "flags", "channels", "phases", "total"} {
				if _, ok := p[k]; !ok {
					t.Errorf("telemetry lacks %q", k)
				}
			}
		case m.Topic == base+"/alarm":
			for _, k := range []string{"seq", "time", "alarm", "state", "metric", "channel", "level", "value", "threshold", "severity", "text"} {
				if _, ok := p[k]; !ok {
					t.Errorf("alarm lacks %q", k)
				}
			}
			if txt, _ := p["text"].(string); !strings.Contains(txt, "PCC") {
				t.Errorf("alarm text %q lacks the IEEE 519 PCC note", txt)
			}
		}
	}
	if err := p1.cmd.Process.Signal(syscall.SIGKILL); err != nil {
		t.Fatal(err)
	}
	p1.wait(t, 10*time.Second)
	sub.WaitFor(t, "Last Will offline after SIGKILL", 30*time.Second, func(m []mqtttest.Message) bool {
		return count(m, base+"/status", func(p payload) bool { return p["status"] == "offline" }) >= 1
	})

	db, err := store.Open(store.Options{Path: filepath.Join(dir, "gl.db")})
	if err != nil {
		t.Fatalf("store after SIGKILL: %v", err)
	}
	if err := db.Check(); err != nil {
		t.Fatalf("bbolt consistency check after SIGKILL: %v", err)
	}
	n1 := db.Stats().Records[metrics.Int3s]
	db.Close()
	if n1 == 0 {
		t.Fatal("no 3 s records stored before the kill")
	}
	raisedBefore := count(sub.Received(), base+"/alarm", func(p payload) bool { return p["state"] == "raised" })
	onlineBefore := count(sub.Received(), base+"/status", func(p payload) bool { return p["status"] == "online" })
	teleBefore := count(sub.Received(), base+"/telemetry/3s", nil)

	p2 := startDaemon(t, "run", "--config", cfg)
	sub.WaitFor(t, "online again and new telemetry", 60*time.Second, func(m []mqtttest.Message) bool {
		return count(m, base+"/status", func(p payload) bool { return p["status"] == "online" }) > onlineBefore &&
			count(m, base+"/telemetry/3s", nil) >= teleBefore+5
	})
	time.Sleep(500 * time.Millisecond) // the alarm rule has seen several 3 s values by now
	// While the daemon holds the store, export goes through its socket.
	ex := runCmd("export", "--store", filepath.Join(dir, "gl.db"), "--interval", "3s", "--timeout", "200ms")
	if ex.code != 0 || strings.Count(ex.stdout, "\n") < n1 {
		t.Errorf("export while running: exit %d, %d lines (want ≥ %d)\n%s", ex.code, strings.Count(ex.stdout, "\n"), n1, ex.stderr)
	}
	if err := p2.cmd.Process.Signal(syscall.SIGTERM); err != nil {
		t.Fatal(err)
	}
	code, took := p2.wait(t, 10*time.Second)
	if code != 0 || took > 5*time.Second {
		t.Errorf("SIGTERM: exit %d after %v, want 0 within 5 s; stderr:\n%s", code, took, p2.stderr)
	}
	all := sub.WaitFor(t, "offline after SIGTERM", 10*time.Second, func(m []mqtttest.Message) bool {
		return len(m) > 0 && m[len(m)-1].Topic == base+"/status" && decode(t, m[len(m)-1])["status"] == "offline"
	})
	if got := count(all, base+"/alarm", func(p payload) bool { return p["state"] == "raised" }); got != raisedBefore {
		t.Errorf("%d raise messages after the restart, want %d: an alarm raised before a restart must not be raised again", got, raisedBefore)
	}
	// seq is never reused: equal seq only for byte-identical resends
	seen := map[float64]string{}
	for _, m := range all {
		p := decode(t, m)
		s, ok := p["seq"].(float64)
		if !ok {
			continue
		}
		if prev, dup := seen[s]; dup && prev != string(m.Payload) {
			t.Errorf("seq %v reused for a different message", s)
		}
		seen[s] = string(m.Payload)
	}
	db, err = store.Open(store.Options{Path: filepath.Join(dir, "gl.db")})
	if err != nil {
		t.Fatal(err)
	}
	defer db.Close()
	if err := db.Check(); err != nil {
		t.Fatalf("consistency check after restart: %v", err)
	}
	var last time.Time
	n2 := 0
	db.Query(metrics.Int3s, time.Time{}, time.Time{}, func(r *metrics.Record) error {
		if !r.Start.After(last) {
			t.Errorf("3 s record at %v not after %v: stored aggregates overlap", r.Start, last)
		}
		last = r.Start.Add(time.Duration(r.DurationS*float64(time.Second)) - time.Millisecond)
		n2++
		return nil
	})
	if n2 <= n1 {
		t.Errorf("%d records after restart, %d before", n2, n1)
	}
}

// TestRunBrokerUnreachable: measuring and storing go on while the broker
// cannot be reached; the log says so; the run ends cleanly.
func TestRunBrokerUnreachable(t *testing.T) {
	dir := t.TempDir()
	port := mqtttest.FreePort(t)
	cfg := daemonConfig(t, dir, fmt.Sprintf("tcp://127.0.0.1:%d", port))
	editConfig(t, cfg, "speed: 60", "speed: 0")
	p := startDaemon(t, "run", "--config", cfg, "--stop-after", "60s")
	code, _ := p.wait(t, 60*time.Second)
	if code != 0 {
		t.Fatalf("exit %d, want 0 after --stop-after; stderr:\n%s", code, p.stderr)
	}
	if !strings.Contains(strings.ToLower(p.stderr.String()), "unreachable") {
		t.Errorf("log does not say the broker is unreachable:\n%s", p.stderr)
	}
	db, err := store.OpenReadOnly(filepath.Join(dir, "gl.db"), time.Second)
	if err != nil {
		t.Fatal(err)
	}
	defer db.Close()
	if n := db.Stats().Records[metrics.Int3s]; n < 19 {
		t.Errorf("%d 3 s records stored in 60 s without a broker, want 20", n)
	}
	if n := db.Stats().Outbox; n[store.ClassTelemetry] == 0 || n[store.ClassAlarm] == 0 {
		t.Errorf("outbox %v: telemetry and alarms must wait in the store for the broker", n)
	}
}

// TestRunStoreUnwritable: a store path that cannot be created is a clear
// error at start, exit 1.
func TestRunStoreUnwritable(t *testing.T) {
	dir := t.TempDir()
	blocker := writeFile(t, dir, "not-a-dir", "x")
	cfgText := strings.Replace(readFile(t, daemonConfig(t, dir, "")), filepath.Join(dir, "gl.db"), filepath.Join(blocker, "gl.db"), 1)
	cfg := writeFile(t, dir, "bad.yaml", strings.Replace(cfgText, `broker: ""`, `broker: ""`, 1))
	r := runCmd("run", "--config", cfg)
	if r.code != 1 || !strings.Contains(r.stderr, "store") {
		t.Errorf("exit %d, stderr %q; want 1 and a message about the store", r.code, r.stderr)
	}
}

// TestExportReadsStore: export prints what run stored, from the file when
// no daemon holds it.
func TestExportReadsStore(t *testing.T) {
	dir := t.TempDir()
	cfg := daemonConfig(t, dir, "")
	editConfig(t, cfg, "speed: 60", "speed: 0")
	if r := runCmd("run", "--config", cfg, "--stop-after", "30s", "--log-level", "error"); r.code != 0 {
		t.Fatalf("run: exit %d: %s", r.code, r.stderr)
	}
	r := runCmd("export", "--store", filepath.Join(dir, "gl.db"), "--interval", "3s", "--format", "jsonl")
	if r.code != 0 {
		t.Fatalf("export: exit %d: %s", r.code, r.stderr)
	}
	lines := strings.Split(strings.TrimSpace(r.stdout), "\n")
	// 10 values of 3 s; 11 when a wall-clock 10-minute tick falls inside
	// the 30 s (the run starts at the wall clock) and cuts a block short
	if len(lines) != 10 && len(lines) != 11 {
		t.Errorf("%d records for 30 s, want 10 (3 s each), or 11 across a 10-minute tick", len(lines))
	}
	var rec map[string]any
	if err := json.Unmarshal([]byte(lines[0]), &rec); err != nil || rec["interval"] != "3s" {
		t.Errorf("first line %q: %v", lines[0], err)
	}
	if r := runCmd("export", "--store", filepath.Join(dir, "gl.db"), "--interval", "5min"); r.code != 2 {
		t.Errorf("bad interval: exit %d, want 2", r.code)
	}
	// for people: per-phase blocks with the site's IEEE 519 reference
	r = runCmd("export", "--store", filepath.Join(dir, "gl.db"), "--interval", "3s", "--format", "table", "--config", cfg)
	if r.code != 0 || strings.Count(r.stdout, "\n3s ") < 10 || !strings.Contains(r.stdout, "TDD %<8") || !strings.Contains(r.stdout, "CAUTION") {
		t.Errorf("export --format table: exit %d, want 10 blocks of 3 s with the TDD limit (IEEE 519-2014 Table 2 row 20<50: 8 %%):\n%s%s", r.code, r.stdout, r.stderr)
	}
}

func readFile(t *testing.T, p string) string {
	t.Helper()
	b, err := os.ReadFile(p)
	if err != nil {
		t.Fatal(err)
	}
	return string(b)
}

// TestDemoRaisesAndClears runs the README's first command as a user would,
// over the same 18 simulated minutes the one-minute demo covers by default
// but as fast as the machine allows (so a loaded machine cannot make it
// miss the clear): the simulated reactor wears and recovers, the
// distortion alarm raises and clears, the summary names the store, exit 0.
func TestDemoRaisesAndClears(t *testing.T) {
	if testing.Short() {
		t.Skip("runs the demo for 18 simulated minutes")
	}
	dir := t.TempDir()
	r := runCmd("demo", "--config", "../../testdata/demo-dc2.yaml", "--speed", "0", "--stop-after", "18m", "--duration", "5m", "--dir", dir)
	if r.code != 0 {
		t.Fatalf("demo: exit %d\n%s", r.code, r.stderr)
	}
	for _, want := range []string{"CAUTION", "RAISED  reactor-wear", "CLEARED reactor-wear", "summary", "tdd_h50_pct(I)", "freq_hz",
		">> EVENT   dip", ">> EVENT   swell", "2 voltage events stored",
		// testdata/demo-dc2.yaml's event rule: raised by the dip at 4 min, cleared 10 min later (its off_delay)
		">> RAISED  supply-dip    event by dip-", ">> CLEARED supply-dip    event after dip-",
		filepath.Join(dir, "gridloupe.db")} {
		if !strings.Contains(r.stdout, want) {
			t.Errorf("demo output lacks %q", want)
		}
	}
	if !strings.Contains(r.stdout, "acknowledged by the broker") {
		t.Errorf("demo summary lacks the published count:\n%s", r.stdout)
	}
	// rows are labelled with their end and come in time order; the first
	// 10 min value (the demo starts at the wall clock, off a tick) is marked
	var last string
	for _, line := range strings.Split(r.stdout, "\n") {
		if len(line) < 19 || !strings.HasPrefix(line, "20") {
			continue
		}
		if end := line[:19]; end < last {
			t.Errorf("row ending %s after one ending %s", end, last)
		} else {
			last = end
		}
	}
	if !strings.Contains(r.stdout, "10min partial") {
		t.Errorf("the first 10 min row is not marked partial:\n%s", r.stdout)
	}
}

// TestRunSourceFails: a source that fails mid-run (a non-numeric cell in a
// CSV source) shuts the daemon down cleanly with the reason, exit 1.
func TestRunSourceFails(t *testing.T) {
	dir := t.TempDir()
	rec := writeCSV(t, dir, 10240, func(i int, row string) string {
		if i == 9000 {
			return "1.0,oops"
		}
		return row
	})
	cfg := writeFile(t, dir, "src.yaml", singleCfg+fmt.Sprintf("source: {kind: csv, path: %s}\nstore: {path: %s}\n", rec, filepath.Join(dir, "s.db")))
	r := runCmd("run", "--config", cfg, "--log-level", "error")
	if r.code != 1 || !strings.Contains(r.stderr, "rec.csv:9003:2") {
		t.Errorf("exit %d, stderr:\n%s\nwant exit 1 naming rec.csv:9003:2", r.code, r.stderr)
	}
	db, err := store.OpenReadOnly(filepath.Join(dir, "s.db"), time.Second)
	if err != nil {
		t.Fatal(err)
	}
	defer db.Close()
	// nothing measured is lost: the 4 windows before the bad row (9000
	// samples) are stored as one 3 s value flagged partial
	// (two partial values if a wall-clock 10-minute tick falls inside them)
	var got []*metrics.Record
	db.Query(metrics.Int3s, time.Time{}, time.Time{}, func(r *metrics.Record) error { got = append(got, r.Clone()); return nil })
	var samples uint64
	for _, r := range got {
		samples += r.Samples
		if r.Flags&metrics.FlagPartial == 0 {
			t.Errorf("3 s value at %v not flagged partial", r.Start)
		}
	}
	if len(got) < 1 || len(got) > 2 || samples != 4*2048 {
		t.Errorf("stored %d records holding %d samples, want the 4 windows (8192 samples) before the bad row", len(got), samples)
	}
}
