package main

import (
	"bufio"
	"bytes"
	"encoding/binary"
	"errors"
	"fmt"
	"math"
	"os"
	"os/exec"
	"path/filepath"
	"slices"
	"strconv"
	"strings"
	"testing"
)

// TestMain lets the test binary be gridloupe-offline itself (the
// environment variable set), so the tests run main as a user does.
func TestMain(m *testing.M) {
	if os.Getenv("GRIDLOUPE_OFFLINE_AS_MAIN") == "1" {
		main()
		os.Exit(0)
	}
	os.Exit(m.Run())
}

// outcome is one process's exit status and output.
type outcome struct {
	code           int
	stdout, stderr string
}

// runProc runs name with args and stdin (nil: none), with env added.
func runProc(t *testing.T, env []string, stdin []byte, name string, args ...string) outcome {
	t.Helper()
	cmd := exec.Command(name, args...)
	cmd.Env = append(os.Environ(), env...)
	if stdin != nil {
		cmd.Stdin = bytes.NewReader(stdin)
	}
	var out, errb bytes.Buffer
	cmd.Stdout, cmd.Stderr = &out, &errb
	err := cmd.Run()
	var ee *exec.ExitError
	code := 0
	switch {
	case errors.As(err, &ee):
		code = ee.ExitCode()
	case err != nil:
		t.Fatalf("%s: %v", name, err)
	}
	return outcome{code, out.String(), errb.String()}
}

// buildGateway builds cmd/gridloupe into dir and returns its path.
func buildGateway(t *testing.T, dir string) string {
	t.Helper()
	bin := filepath.Join(dir, "gridloupe")
	cmd := exec.Command("go", "build", "-o", bin, "github.com/gridloupe/gridloupe/cmd/gridloupe")
	if out, err := cmd.CombinedOutput(); err != nil {
		t.Fatalf("go build ./cmd/gridloupe: %v\n%s", err, out)
	}
	return bin
}

// recording reads testdata/north-weir-dc2.csv (the simulator's invented
// cabinet, six channels at 10.24 kHz) as interleaved frames.
func recording(t *testing.T) []float64 {
	t.Helper()
	f, err := os.Open("../../testdata/north-weir-dc2.csv")
	if err != nil {
		t.Fatal(err)
	}
	defer f.Close()
	var vals []float64
	sc := bufio.NewScanner(f)
	for sc.Scan() {
		line := sc.Text()
		if line == "" || line[0] == '#' || line[0] == 't' {
			continue
		}
		fields := strings.Split(line, ",")[1:] // after the t column
		for _, s := range fields {
			v, err := strconv.ParseFloat(s, 64)
			if err != nil {
				t.Fatalf("north-weir-dc2.csv: %q: %v", line, err)
			}
			vals = append(vals, v)
		}
	}
	if err := sc.Err(); err != nil {
		t.Fatal(err)
	}
	return vals
}

// f32le is vals as little-endian 32-bit floats.
func f32le(vals []float64) []byte {
	b := make([]byte, 0, 4*len(vals))
	for _, v := range vals {
		b = binary.LittleEndian.AppendUint32(b, math.Float32bits(float32(v)))
	}
	return b
}

// wavFloat is a six-channel 10.24 kHz IEEE-float WAV of vals (RIFF/WAVE
// layout: a 16-byte fmt chunk with format code 3, then data).
func wavFloat(vals []float64) []byte {
	le := binary.LittleEndian
	data := f32le(vals)
	b := []byte("RIFF")
	b = le.AppendUint32(b, uint32(4+8+16+8+len(data)))
	b = append(b, "WAVEfmt "...)
	b = le.AppendUint32(b, 16)
	b = le.AppendUint16(b, 3)         // IEEE float
	b = le.AppendUint16(b, 6)         // channels
	b = le.AppendUint32(b, 10240)     // frames per second
	b = le.AppendUint32(b, 10240*6*4) // bytes per second
	b = le.AppendUint16(b, 6*4)       // bytes per frame
	b = le.AppendUint16(b, 32)        // bits per sample
	b = append(b, "data"...)
	b = le.AppendUint32(b, uint32(len(data)))
	return append(b, data...)
}

// comtradeASCII writes vals as an ASCII COMTRADE recording (IEEE
// C37.111-1999 layout: station line, channel counts, one line per analog
// channel, frequency, rates, time stamps, file type, time multiplier)
// with the config's channel names as ids, counts of 1 mV or 1 mA (a =
// 0.001), and returns the .cfg path.
func comtradeASCII(t *testing.T, dir string, vals []float64) string {
	t.Helper()
	n := len(vals) / 6
	var c strings.Builder
	c.WriteString("North Weir DC-2,offline-test,1999\n6,6A,0D\n")
	for i, id := range []string{"va", "vb", "vc", "ia", "ib", "ic"} {
		unit := "V"
		if i >= 3 {
			unit = "A"
		}
		fmt.Fprintf(&c, "%d,%s,%c,dc2,%s,0.001,0,0,-999999,999999,1,1,P\n", i+1, id, 'A'+i%3, unit)
	}
	fmt.Fprintf(&c, "50\n1\n10240,%d\n01/03/2026,10:00:00.000000\n01/03/2026,10:00:00.000000\nASCII\n1\n", n)
	var d strings.Builder
	for k := range n {
		fmt.Fprintf(&d, "%d,%d", k+1, int64(math.Round(float64(k)*1e6/10240)))
		for _, v := range vals[k*6 : k*6+6] {
			fmt.Fprintf(&d, ",%d", int64(math.Round(v*1000)))
		}
		d.WriteString("\r\n")
	}
	cfg := filepath.Join(dir, "rec.cfg")
	if err := os.WriteFile(cfg, []byte(c.String()), 0o644); err != nil {
		t.Fatal(err)
	}
	if err := os.WriteFile(filepath.Join(dir, "rec.dat"), []byte(d.String()), 0o644); err != nil {
		t.Fatal(err)
	}
	return cfg
}

// TestSameAsGateway: for recordings in every input kind and format, and
// for bad command lines, gridloupe-offline prints exactly what
// `gridloupe replay` prints, byte for byte on stdout, with the same
// warnings and exit status; only the program name before a final error
// differs (README "Offline analysis": same flags, output and errors).
func TestSameAsGateway(t *testing.T) {
	dir := t.TempDir()
	gw := buildGateway(t, dir)
	self, err := os.Executable()
	if err != nil {
		t.Fatal(err)
	}
	cfg := "../../testdata/north-weir-dc2.yaml"
	csvIn := "../../testdata/north-weir-dc2.csv"
	vals := recording(t)
	wav := filepath.Join(dir, "rec.wav")
	raw := filepath.Join(dir, "rec.f32")
	cut := filepath.Join(dir, "cut.wav")
	whole := wavFloat(vals)
	for path, b := range map[string][]byte{wav: whole, raw: f32le(vals), cut: whole[:len(whole)-7]} {
		if err := os.WriteFile(path, b, 0o644); err != nil {
			t.Fatal(err)
		}
	}
	csvBytes, err := os.ReadFile(csvIn)
	if err != nil {
		t.Fatal(err)
	}
	cfgCOMTRADE := comtradeASCII(t, dir, vals)
	dipped := append([]float64(nil), vals...)
	for k := 10000; k < 13000; k++ { // about 0.3 s at 40 % of the voltage: a dip (IEC 61000-4-30 5.4.2: below 90 %)
		for ch := range 3 {
			dipped[k*6+ch] *= 0.4
		}
	}
	dip := filepath.Join(dir, "dip.wav")
	if err := os.WriteFile(dip, wavFloat(dipped), 0o644); err != nil {
		t.Fatal(err)
	}
	badCfg := filepath.Join(dir, "bad.yaml")
	if err := os.WriteFile(badCfg, []byte("site: x\nnominal: {frequency_hz: 55}\n"), 0o644); err != nil {
		t.Fatal(err)
	}
	cases := []struct {
		name   string
		args   []string
		stdin  []byte
		ok     bool // exit status 0 with output expected
		events bool // add --events FILE and compare the files too
	}{
		{"csv jsonl 200ms", []string{"--config", cfg, csvIn}, nil, true, false},
		{"csv csv 3s", []string{"--config", cfg, "--interval", "3s", "--format", "csv", csvIn}, nil, true, false},
		{"csv table", []string{"--config", cfg, "--format", "table", csvIn}, nil, true, false},
		{"csv wide with start", []string{"--config", cfg, "--format", "wide", "--start", "2026-03-01T10:00:00Z", csvIn}, nil, true, false},
		{"stdin csv", []string{"--config", cfg, "-"}, csvBytes, true, false},
		{"wav float", []string{"--config", cfg, wav}, nil, true, false},
		{"wav cut mid-frame", []string{"--config", cfg, "--format", "csv", cut}, nil, true, false},
		{"comtrade ascii", []string{"--config", cfg, "--interval", "3s", cfgCOMTRADE}, nil, true, false},
		{"pcm f32le", []string{"--config", cfg, "--pcm", "f32le", raw}, nil, true, false},
		{"wav with a dip, events", []string{"--config", cfg, "--format", "csv", dip}, nil, true, true},
		{"no args", nil, nil, false, false},
		{"no input", []string{"--config", cfg}, nil, false, false},
		{"bad interval", []string{"--config", cfg, "--interval", "2h", csvIn}, nil, false, false},
		{"bad format", []string{"--config", cfg, "--format", "xml", csvIn}, nil, false, false},
		{"unknown flag", []string{"--config", cfg, "--store", "x", csvIn}, nil, false, false},
		{"framing without pcm", []string{"--config", cfg, "--framing", "glf1", csvIn}, nil, false, false},
		{"bad config", []string{"--config", badCfg, csvIn}, nil, false, false},
		{"missing input", []string{"--config", cfg, filepath.Join(dir, "none.csv")}, nil, false, false},
		{"missing config", []string{"--config", filepath.Join(dir, "none.yaml"), csvIn}, nil, false, false},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			wantArgs, gotArgs := append([]string{"replay"}, c.args...), c.args
			wantEv, gotEv := filepath.Join(dir, "want-events.jsonl"), filepath.Join(dir, "got-events.jsonl")
			if c.events {
				wantArgs = append([]string{"replay", "--events", wantEv}, c.args...)
				gotArgs = append([]string{"--events", gotEv}, c.args...)
			}
			want := runProc(t, nil, c.stdin, gw, wantArgs...)
			got := runProc(t, []string{"GRIDLOUPE_OFFLINE_AS_MAIN=1"}, c.stdin, self, gotArgs...)
			if c.ok && (want.code != 0 || len(want.stdout) < 1000) {
				t.Fatalf("gridloupe replay: exit %d, %d bytes out, stderr %q", want.code, len(want.stdout), want.stderr)
			}
			if !c.ok && want.code == 0 {
				t.Fatalf("gridloupe replay accepted it: stderr %q", want.stderr)
			}
			if got.code != want.code {
				t.Errorf("exit status %d, gridloupe replay's %d", got.code, want.code)
			}
			if got.stdout != want.stdout {
				t.Errorf("stdout differs from gridloupe replay's (%d vs %d bytes)", len(got.stdout), len(want.stdout))
			}
			if c.events {
				w, werr := os.ReadFile(wantEv)
				g, gerr := os.ReadFile(gotEv)
				switch {
				case werr != nil || gerr != nil:
					t.Fatalf("events files: %v, %v", werr, gerr)
				case !bytes.Contains(w, []byte(`"dip"`)):
					t.Errorf("gridloupe replay's events file holds no dip:\n%s", w)
				case !bytes.Equal(g, w):
					t.Errorf("events file\n%s\nwant gridloupe replay's\n%s", g, w)
				}
			}
			if g, w := strings.Replace(got.stderr, "gridloupe-offline: ", "gridloupe: ", 1), want.stderr; g != w {
				t.Errorf("stderr\n%q\nwant (gridloupe replay's, the program name aside)\n%q", got.stderr, w)
			}
		})
	}
}

// TestHelp: --help prints replay's help under this program's name, exit 0.
func TestHelp(t *testing.T) {
	dir := t.TempDir()
	want := runProc(t, nil, nil, buildGateway(t, dir), "replay", "--help")
	self, err := os.Executable()
	if err != nil {
		t.Fatal(err)
	}
	got := runProc(t, []string{"GRIDLOUPE_OFFLINE_AS_MAIN=1"}, nil, self, "--help")
	if got.code != 0 || want.code != 0 {
		t.Fatalf("exit %d and %d, want 0", got.code, want.code)
	}
	w := strings.Replace(want.stdout, "Usage: gridloupe replay ", "Usage: gridloupe-offline ", 1)
	if got.stdout != w || !strings.Contains(w, "--pcm FORMAT") {
		t.Errorf("help\n%s\nwant\n%s", got.stdout, w)
	}
}

// forbidden are the packages the offline executable must not link: the
// network stack (package net; net/netip and net/url are parsers and may
// stay), TLS, the HTTP server, and every package of the store, MQTT
// client, broker and Modbus modules (README "Offline analysis").
var (
	forbidden       = []string{"net", "crypto/tls", "net/http"}
	forbiddenModule = []string{
		"go.etcd.io/bbolt",
		"github.com/eclipse/paho.mqtt.golang",
		"github.com/mochi-mqtt/server/v2",
		"github.com/simonvetter/modbus",
	}
)

// TestLinksNoNetwork lists the executable's dependencies (`go list -deps`,
// which names every package linked) and fails on any forbidden one.
func TestLinksNoNetwork(t *testing.T) {
	out, err := exec.Command("go", "list", "-deps", "github.com/gridloupe/gridloupe/cmd/gridloupe-offline").Output()
	if err != nil {
		t.Fatalf("go list -deps: %v", err)
	}
	deps := strings.Fields(string(out))
	if len(deps) < 20 {
		t.Fatalf("go list -deps gave %d packages: %q", len(deps), out)
	}
	for _, d := range deps {
		if slices.Contains(forbidden, d) {
			t.Errorf("gridloupe-offline links %s", d)
		}
		for _, m := range forbiddenModule {
			if d == m || strings.HasPrefix(d, m+"/") {
				t.Errorf("gridloupe-offline links %s", d)
			}
		}
	}
}
