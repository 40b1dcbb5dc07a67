package main

import (
	"bufio"
	"bytes"
	"encoding/binary"
	"errors"
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
	badCfg := filepath.Join(dir, "bad.yaml")
	if err := os.WriteFile(badCfg, []byte("site: x\nnominal: {frequency_hz: 55}\n"), 0o644); err != nil {
		t.Fatal(err)
	}
	cases := []struct {
		name  string
		args  []string
		stdin []byte
		ok    bool // exit status 0 with output expected
	}{
		{"csv jsonl 200ms", []string{"--config", cfg, csvIn}, nil, true},
		{"csv csv 3s", []string{"--config", cfg, "--interval", "3s", "--format", "csv", csvIn}, nil, true},
		{"csv table", []string{"--config", cfg, "--format", "table", csvIn}, nil, true},
		{"csv wide with start", []string{"--config", cfg, "--format", "wide", "--start", "2026-03-01T10:00:00Z", csvIn}, nil, true},
		{"stdin csv", []string{"--config", cfg, "-"}, csvBytes, true},
		{"wav float", []string{"--config", cfg, wav}, nil, true},
		{"wav cut mid-frame", []string{"--config", cfg, "--format", "csv", cut}, nil, true},
		{"pcm f32le", []string{"--config", cfg, "--pcm", "f32le", raw}, nil, true},
		{"no args", nil, nil, false},
		{"no input", []string{"--config", cfg}, nil, false},
		{"bad interval", []string{"--config", cfg, "--interval", "2h", csvIn}, nil, false},
		{"bad format", []string{"--config", cfg, "--format", "xml", csvIn}, nil, false},
		{"unknown flag", []string{"--config", cfg, "--store", "x", csvIn}, nil, false},
		{"framing without pcm", []string{"--config", cfg, "--framing", "glf1", csvIn}, nil, false},
		{"bad config", []string{"--config", badCfg, csvIn}, nil, false},
		{"missing input", []string{"--config", cfg, filepath.Join(dir, "none.csv")}, nil, false},
		{"missing config", []string{"--config", filepath.Join(dir, "none.yaml"), csvIn}, nil, false},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			want := runProc(t, nil, c.stdin, gw, append([]string{"replay"}, c.args...)...)
			got := runProc(t, []string{"GRIDLOUPE_OFFLINE_AS_MAIN=1"}, c.stdin, self, c.args...)
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
