package main

import (
	"bytes"
	"context"
	"encoding/csv"
	"errors"
	"fmt"
	"io"
	"math"
	"net"
	"net/http"
	"os"
	"os/exec"
	"path/filepath"
	"regexp"
	"strconv"
	"strings"
	"syscall"
	"testing"
	"time"

	"github.com/prometheus/common/expfmt"
	"github.com/prometheus/common/model"
	mb "github.com/simonvetter/modbus"

	"github.com/gridloupe/gridloupe/metrics"
	"github.com/gridloupe/gridloupe/store"
	"github.com/gridloupe/gridloupe/stream/mqtt/mqtttest"
)

// freePort returns a loopback host:port that was free a moment ago.
func freePort(t *testing.T) string {
	t.Helper()
	l, err := net.Listen("tcp", "127.0.0.1:0")
	if err != nil {
		t.Fatal(err)
	}
	defer l.Close()
	return l.Addr().String()
}

// needTool finds a Debian tool the test drives; under CI (which installs
// it) a missing tool fails the test, elsewhere it skips.
func needTool(t *testing.T, name string) string {
	t.Helper()
	p, err := exec.LookPath(name)
	if err != nil {
		if os.Getenv("CI") != "" {
			t.Fatalf("%s is not installed (.ci/run installs it): %v", name, err)
		}
		t.Skipf("%s is not installed", name)
	}
	return p
}

// integrationConfig is a three-phase simulated North Weir cabinet (DESIGN.md
// scenario, invented) at 60× real time with the Modbus and HTTP servers on.
func integrationConfig(t *testing.T, dir, modbusAddr, httpAddr string) string {
	t.Helper()
	cfg := fmt.Sprintf(`site: north-weir-dc2
gateway: dc2-gw1
nominal: {frequency_hz: 50, voltage_v: 230, current_a: 160}
wiring: wye
sample_rate_hz: 6400
harmonics: all
il_a: 160
isc_a: 6100
`+wyeChannels+`source: {kind: sim, speed: 60}
store: {path: %s, commit_every: 1s}
modbus: {listen: %q}
http: {listen: %q}
alarms:
  - {name: tdd-ia, metric: tdd_h50_pct, channel: ia, level: 3s, above: 0.5, severity: warning}
`, filepath.Join(dir, "gl.db"), modbusAddr, httpAddr)
	return writeFile(t, dir, "gw.yaml", cfg)
}

// mapAddress reads the address of quantity at level from the CSV that
// gridloupe modbus-map prints, as an integrator would.
func mapAddress(t *testing.T, mapCSV []byte, quantity, level string) int {
	t.Helper()
	rows, err := csv.NewReader(bytes.NewReader(mapCSV)).ReadAll()
	if err != nil {
		t.Fatal(err)
	}
	for _, r := range rows[1:] {
		if r[1] == quantity && r[3] == level {
			a, _ := strconv.Atoi(r[0])
			return a
		}
	}
	t.Fatalf("%s (%s) not in the map", quantity, level)
	return 0
}

func TestModbusAgainstRunningGateway(t *testing.T) {
	if testing.Short() && os.Getenv("CI") == "" {
		t.Skip("starts the daemon; runs in CI and without -short")
	}
	mbpoll := needTool(t, "mbpoll")
	dir := t.TempDir()
	maddr := freePort(t)
	cfgPath := integrationConfig(t, dir, maddr, freePort(t))
	var mapCSV, errb bytes.Buffer
	if err := run(context.Background(), []string{"modbus-map", "--config", cfgPath}, nil, &mapCSV, &errb); err != nil {
		t.Fatalf("modbus-map: %v %s", err, errb.String())
	}
	p := startDaemon(t, "run", "--config", cfgPath)

	c, err := mb.NewClient(&mb.ClientConfiguration{URL: "tcp://" + maddr, Timeout: time.Second})
	if err != nil {
		t.Fatal(err)
	}
	freqAddr := uint16(mapAddress(t, mapCSV.Bytes(), "freq_hz", "3s"))
	var freq float32
	deadline := time.Now().Add(20 * time.Second)
	for {
		if c.Open() == nil {
			freq, err = c.ReadFloat32(freqAddr, mb.INPUT_REGISTER)
			if err == nil && !math.IsNaN(float64(freq)) {
				break
			}
			c.Close()
		}
		if time.Now().After(deadline) {
			t.Fatalf("no 3 s frequency over Modbus within 20 s (last err %v); stderr:\n%s", err, p.stderr)
		}
		time.Sleep(100 * time.Millisecond)
	}
	defer c.Close()
	// The simulator runs the DESIGN.md scenario: 50 Hz, 230 V phase to
	// neutral. Sensible values lie within EN 50160's ±1 % frequency band
	// and ±10 % voltage band (common practice for a healthy supply).
	if freq < 49.5 || freq > 50.5 {
		t.Errorf("freq_hz = %v, want 50 Hz ± 1 %%", freq)
	}
	read := func(q string) float64 {
		v, err := c.ReadFloat32(uint16(mapAddress(t, mapCSV.Bytes(), q, "3s")), mb.INPUT_REGISTER)
		if err != nil {
			t.Fatalf("%s: %v", q, err)
		}
		return float64(v)
	}
	if v := read("vb.rms"); v < 207 || v > 253 {
		t.Errorf("vb.rms = %v, want 230 V ± 10 %%", v)
	}
	if v := read("total.p_w"); v <= 0 {
		t.Errorf("total.p_w = %v, want positive: the pumps draw power", v)
	}
	if v := read("age_s"); v < 0 || v > 10 {
		t.Errorf("age_s = %v, want a few seconds at most while the gateway runs", v)
	}

	// The same register with Debian's mbpoll: 0-based reference, input
	// register float, high word first (REFERENCE.md §8).
	out, err := exec.Command(mbpoll, "-m", "tcp", "-p", maddr[strings.LastIndexByte(maddr, ':')+1:], "-a", "1",
		"-t", "3:float", "-B", "-0", "-r", strconv.Itoa(int(freqAddr)), "-c", "1", "-1", "-o", "2", "127.0.0.1").CombinedOutput()
	if err != nil {
		t.Fatalf("mbpoll: %v\n%s", err, out)
	}
	var got float64
	for _, line := range strings.Split(string(out), "\n") {
		if f := strings.Fields(line); len(f) == 2 && strings.HasPrefix(f[0], "["+strconv.Itoa(int(freqAddr))+"]") {
			got, err = strconv.ParseFloat(f[1], 64)
		}
	}
	if err != nil || got < 49.5 || got > 50.5 {
		t.Errorf("mbpoll read %v (%v), want 50 Hz ± 1 %%:\n%s", got, err, out)
	}
	if err := p.cmd.Process.Signal(syscall.SIGTERM); err != nil {
		t.Fatal(err)
	}
	if code, _ := p.wait(t, 20*time.Second); code != 0 {
		t.Errorf("exit %d after SIGTERM, want 0; stderr:\n%s", code, p.stderr)
	}
}

// TestReadmeRegisterExcerpt checks that every row of the README's register
// map excerpt is a row that modbus-map prints for the example config.
func TestReadmeRegisterExcerpt(t *testing.T) {
	readme, err := os.ReadFile("../../README.md")
	if err != nil {
		t.Fatal(err)
	}
	var out, errb bytes.Buffer
	if err := run(context.Background(), []string{"modbus-map", "--config", "../../testdata/north-weir-dc2.yaml"}, nil, &out, &errb); err != nil {
		t.Fatalf("modbus-map: %v %s", err, errb.String())
	}
	rows := map[string]bool{}
	for _, l := range strings.Split(out.String(), "\n") {
		rows[l] = true
	}
	_, after, ok := strings.Cut(string(readme), "```\naddress,quantity,unit,level,type\n")
	if !ok {
		t.Fatal("README has no register map excerpt")
	}
	excerpt, _, _ := strings.Cut(after, "```")
	for _, l := range strings.Split(strings.TrimSpace(excerpt), "\n") {
		if !rows[l] {
			t.Errorf("README excerpt row %q is not in modbus-map's output", l)
		}
	}
}

// headless runs Debian's chromium headless with a fresh profile and the
// flags that keep it off the network, and returns its stdout.
func headless(t *testing.T, args ...string) []byte {
	t.Helper()
	bin := needTool(t, "chromium")
	base := []string{"--headless", "--no-sandbox", "--disable-gpu", "--disable-background-networking",
		"--disable-component-update", "--disable-sync", "--no-first-run", "--user-data-dir=" + t.TempDir(),
		"--virtual-time-budget=5000"}
	ctx, cancel := context.WithTimeout(context.Background(), 90*time.Second)
	defer cancel()
	cmd := exec.CommandContext(ctx, bin, append(base, args...)...)
	var out, errb bytes.Buffer
	cmd.Stdout, cmd.Stderr = &out, &errb
	if err := cmd.Run(); err != nil {
		t.Fatalf("chromium %v: %v\n%s", args, err, errb.String())
	}
	return out.Bytes()
}

// shotDir is where screenshot tests also leave their PNGs when
// GRIDLOUPE_SHOTS names a folder (how the README's pictures are made).
func shotDir(t *testing.T) string {
	if d := os.Getenv("GRIDLOUPE_SHOTS"); d != "" {
		return d
	}
	return t.TempDir()
}

func TestHTTPAgainstRunningGateway(t *testing.T) {
	if testing.Short() && os.Getenv("CI") == "" {
		t.Skip("starts the daemon and a browser; runs in CI and without -short")
	}
	needTool(t, "chromium")
	dir := t.TempDir()
	haddr := freePort(t)
	cfgPath := integrationConfig(t, dir, freePort(t), haddr)
	p := startDaemon(t, "run", "--config", cfgPath)
	base := "http://" + haddr
	var body []byte
	// The simulator runs at 60x: a first 10 min value needs about 10 s, much
	// longer under the race detector on a loaded two-core machine.
	deadline := time.Now().Add(150 * time.Second)
	for {
		resp, err := http.Get(base + "/metrics")
		if err == nil {
			body, _ = io.ReadAll(resp.Body)
			resp.Body.Close()
			if bytes.Contains(body, []byte("gridloupe_frequency_hertz{")) && bytes.Contains(body, []byte(`level="10min"`)) {
				break
			}
		}
		if time.Now().After(deadline) {
			t.Fatalf("no 3 s and 10 min values on /metrics within 150 s; stderr:\n%s", p.stderr)
		}
		time.Sleep(200 * time.Millisecond)
	}
	tp := expfmt.NewTextParser(model.UTF8Validation)
	fams, err := tp.TextToMetricFamilies(bytes.NewReader(body))
	if err != nil {
		t.Fatalf("/metrics is not valid Prometheus text: %v", err)
	}
	for _, name := range []string{"gridloupe_frequency_hertz", "gridloupe_rms_volts", "gridloupe_power_factor_ratio", "gridloupe_tdd_h50_ratio",
		"gridloupe_alarm_active", "gridloupe_records_stored_total", "gridloupe_outbox_messages", "gridloupe_store_bytes"} {
		if fams[name] == nil {
			t.Errorf("/metrics lacks %s", name)
		}
	}
	// The page, rendered in a real browser: it fetches /api/latest and
	// draws the per-phase table (3 phases), six phasors and the bars of
	// six spectra (49 orders each, fewer where a value is null).
	dom := headless(t, "--window-size=1200,1400", "--dump-dom", base+"/")
	m := regexp.MustCompile(`data-drawn="(\d+),(\d+),(\d+)"`).FindSubmatch(dom)
	if m == nil {
		t.Fatalf("the page drew nothing (no data-drawn attribute):\n%.2000s", dom)
	}
	if string(m[1]) != "3" || string(m[2]) != "6" {
		t.Errorf("drew %s phases and %s phasors, want 3 and 6", m[1], m[2])
	}
	if bars, _ := strconv.Atoi(string(m[3])); bars < 6*40 {
		t.Errorf("drew %d spectrum bars, want about 6 × 49", bars)
	}
	shots := shotDir(t)
	png := filepath.Join(shots, "status-page.png")
	headless(t, "--window-size=1200,1150", "--screenshot="+png, base+"/")
	if fi, err := os.Stat(png); err != nil || fi.Size() < 20000 {
		t.Errorf("screenshot %s: %v (size %d), want a drawn page", png, err, fi.Size())
	}
	if err := p.cmd.Process.Signal(syscall.SIGTERM); err != nil {
		t.Fatal(err)
	}
	if code, _ := p.wait(t, 20*time.Second); code != 0 {
		t.Errorf("exit %d after SIGTERM, want 0; stderr:\n%s", code, p.stderr)
	}
}

// energyTol: the per-window energy integral against the stored 3 s means
// of the same windows times their durations; they differ only by float64
// rounding and the float32 storage of P (7 significant digits), far below
// this (common practice, no source).
const energyTol = 1e-4

func TestEnergySurvivesRestarts(t *testing.T) {
	if testing.Short() && os.Getenv("CI") == "" {
		t.Skip("runs the daemon twice; runs in CI and without -short")
	}
	dir := t.TempDir()
	cfgPath := integrationConfig(t, dir, freePort(t), freePort(t))
	cfgText, _ := os.ReadFile(cfgPath)
	cfgPath = writeFile(t, dir, "fast.yaml", strings.Replace(string(cfgText), "speed: 60", "speed: 0", 1))
	dbPath := filepath.Join(dir, "gl.db")
	var prev float64
	for round := 1; round <= 2; round++ {
		p := startDaemon(t, "run", "--config", cfgPath, "--stop-after", "4m")
		if code, _ := p.wait(t, 120*time.Second); code != 0 {
			t.Fatalf("round %d: exit %d; stderr:\n%s", round, code, p.stderr)
		}
		db, err := store.OpenReadOnly(dbPath, time.Second)
		if err != nil {
			t.Fatal(err)
		}
		es, err := db.Energy()
		if err != nil || len(es) != 1 || es[0].Circuit != "main" {
			db.Close()
			t.Fatalf("round %d: energy %+v, %v", round, es, err)
		}
		// Closed form E = Σ P·Δt over the stored 3 s values (all import:
		// the simulated pumps draw power throughout).
		var wh float64
		if err := db.Query(metrics.Int3s, time.Time{}, time.Time{}, func(r *metrics.Record) error {
			wh += r.Total.P * r.DurationS / 3600
			return nil
		}); err != nil {
			t.Fatal(err)
		}
		db.Close()
		got := es[0].ImportWh
		if math.Abs(got-wh) > energyTol*wh {
			t.Errorf("round %d: import %.3f Wh, want %.3f Wh from the stored 3 s values (E = Σ P·Δt)", round, got, wh)
		}
		if got <= prev || es[0].ExportWh != 0 {
			t.Errorf("round %d: import %.3f Wh after %.3f Wh before the restart, export %v: counters must grow across restarts", round, got, prev, es[0].ExportWh)
		}
		prev = got
	}
}

// TestEnergyAndDiagnosticsOverMQTT: with every 10 min value the gateway
// publishes …/energy and …/diagnostics (README Energy and demand, Weekly
// report), through a real mosquitto.
func TestEnergyAndDiagnosticsOverMQTT(t *testing.T) {
	if testing.Short() && os.Getenv("CI") == "" {
		t.Skip("runs the daemon with a broker; runs in CI and without -short")
	}
	mosq := mqtttest.Start(t)
	base := "gridloupe/north-weir-dc2/dc2-gw1"
	sub := mqtttest.Subscribe(t, mosq.URL(), base+"/#")
	dir := t.TempDir()
	cfgPath := integrationConfig(t, dir, freePort(t), freePort(t))
	cfgText, _ := os.ReadFile(cfgPath)
	cfgPath = writeFile(t, dir, "mqtt.yaml", strings.Replace(string(cfgText), "speed: 60", "speed: 0", 1)+
		fmt.Sprintf("mqtt: {broker: %q}\n", mosq.URL()))
	p := startDaemon(t, "run", "--config", cfgPath, "--stop-after", "11m")
	msgs := sub.WaitFor(t, "energy and diagnostics", 180*time.Second, func(m []mqtttest.Message) bool {
		return count(m, base+"/energy", nil) >= 1 && count(m, base+"/diagnostics", nil) >= 1
	})
	for _, m := range msgs {
		pl := decode(t, m)
		switch m.Topic {
		case base + "/energy":
			c, _ := pl["circuits"].(map[string]any)
			main, _ := c["main"].(map[string]any)
			if imp, _ := main["import_kwh"].(float64); !(imp > 0) {
				t.Errorf("energy: import_kwh %v, want positive (the pumps draw power): %s", main["import_kwh"], m.Payload)
			}
			if il, _ := pl["il"].(map[string]any); il["basis"] != "il_a from the config" || il["a"] != 160.0 {
				t.Errorf("energy: il %v, want 160 A from the config", il)
			}
		case base + "/diagnostics":
			hp, _ := pl["harmonic_power"].([]any)
			seen5 := false
			for _, x := range hp {
				o := x.(map[string]any)
				// The simulator's supply impedance is a pure reactance
				// (stream/sim: V_h = −j·h·X·I_h), so P_h = 0 closed form:
				// no direction can be told.
				if o["h"] == 5.0 {
					seen5 = true
					if o["direction"] != "neither" {
						t.Errorf("diagnostics: h5 %v, want neither (V_h ⟂ I_h for a lossless source)", o)
					}
				}
			}
			if !seen5 || pl["load"] == nil {
				t.Errorf("diagnostics without h5 or load: %s", m.Payload)
			}
		}
	}
	// Stop it now rather than wait for --stop-after: 21 simulated minutes
	// take minutes under the race detector on a loaded machine.
	if err := p.cmd.Process.Signal(syscall.SIGTERM); err != nil && !errors.Is(err, os.ErrProcessDone) {
		t.Fatal(err)
	}
	if code, _ := p.wait(t, 120*time.Second); code != 0 {
		t.Errorf("exit %d; stderr:\n%s", code, p.stderr)
	}
}
