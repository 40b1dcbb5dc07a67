package main

import (
	"bufio"
	"bytes"
	"context"
	"encoding/binary"
	"encoding/json"
	"fmt"
	"math"
	"os"
	"path/filepath"
	"strings"
	"testing"

	"github.com/gridloupe/gridloupe/goertzel"
)

const singleCfg = `site: test-bench
nominal: {frequency_hz: 50, voltage_v: 230}
wiring: single-phase
sample_rate_hz: 10240
harmonics: [3, 5, 7]
channels:
  - {name: v, kind: voltage, phase: a}
  - {name: i, kind: current, phase: a}
`

// writeCSV writes a single-phase recording: a 230 V sine and a 10 A current
// lagging 36.87° (PF 0.8), for the given number of samples at 10.24 kHz.
// mutate may change a row's text.
func writeCSV(t *testing.T, dir string, samples int, mutate func(i int, row string) string) string {
	t.Helper()
	return writeBuffered(t, filepath.Join(dir, "rec.csv"), func(w *bufio.Writer) {
		fmt.Fprintln(w, "# invented bench recording")
		fmt.Fprintln(w, "v,i")
		phi := math.Acos(0.8)
		for n := range samples {
			a := 2 * math.Pi * 50 * float64(n) / 10240
			row := fmt.Sprintf("%.6f,%.6f", 230*math.Sqrt2*math.Cos(a), 10*math.Sqrt2*math.Cos(a-phi))
			if mutate != nil {
				row = mutate(n, row)
			}
			fmt.Fprintln(w, row)
		}
	})
}

func writeFile(t *testing.T, dir, name, text string) string {
	t.Helper()
	p := filepath.Join(dir, name)
	if err := os.WriteFile(p, []byte(text), 0o644); err != nil {
		t.Fatal(err)
	}
	return p
}

type result struct {
	code           int
	stdout, stderr string
}

func runCmd(args ...string) result {
	var out, errb bytes.Buffer
	err := run(context.Background(), args, strings.NewReader(""), &out, &errb)
	if err != nil {
		fmt.Fprintln(&errb, "gridloupe:", err)
	}
	return result{exitCode(err), out.String(), errb.String()}
}

// TestErrorTable checks every row of DESIGN's "Errors and exit codes" table.
func TestErrorTable(t *testing.T) {
	dir := t.TempDir()
	cfg := writeFile(t, dir, "cfg.yaml", singleCfg)
	good := writeCSV(t, dir, 10240, nil)
	badCfg := writeFile(t, dir, "bad.yaml", strings.Replace(singleCfg, "frequency_hz: 50", "frequency_hz: 55", 1))
	noCol := writeFile(t, dir, "nocol.csv", "v,x\n1,2\n")
	wav := writeFile(t, dir, "bad.wav", "RIFF\x10\x00\x00\x00WAVEjunk")
	nonNum := func() string {
		d := t.TempDir()
		return writeCSV(t, d, 5000, func(i int, row string) string {
			if i == 4321 {
				return "1.0,abc"
			}
			return row
		})
	}()
	cut := func() string {
		d := t.TempDir()
		return writeCSV(t, d, 2048*3+100, nil) // three windows and 100 samples
	}()
	cases := []struct {
		name       string
		args       []string
		code       int
		stdoutNone bool
		errHas     []string
		src        string
	}{
		{"unknown flag", []string{"replay", "--bogus"}, 2, true, []string{"bogus"}, "DESIGN errors table: usage error → exit 2"},
		{"no input", []string{"replay", "--config", cfg}, 2, true, []string{"exactly one INPUT"}, "usage error"},
		{"bad interval", []string{"replay", "--config", cfg, "--interval", "5m", good}, 2, true, []string{"200ms, 3s, 10min"}, "usage error names what is allowed"},
		{"bad format", []string{"replay", "--config", cfg, "--format", "xml", good}, 2, true, []string{"jsonl, csv, table"}, "usage error names what is allowed"},
		{"config error", []string{"replay", "--config", badCfg, good}, 2, true, []string{"bad.yaml:2:", "frequency_hz"}, "config error names file, line, key → exit 2"},
		{"config missing", []string{"replay", "--config", filepath.Join(dir, "nope.yaml"), good}, 2, true, []string{"nope.yaml"}, "config error"},
		{"csv header", []string{"replay", "--config", cfg, noCol}, 2, true, []string{"nocol.csv:", "i"}, "CSV header error → exit 2"},
		{"wav header", []string{"replay", "--config", cfg, wav}, 2, true, []string{"bad.wav"}, "unreadable WAV header → exit 2"},
		{"input missing", []string{"replay", "--config", cfg, filepath.Join(dir, "gone.csv")}, 1, false, []string{"gone.csv"}, "input file missing → exit 1 with the path"},
		{"non-numeric cell", []string{"replay", "--config", cfg, nonNum}, 1, false, []string{"rec.csv:4324:2", "abc"}, "non-numeric cell: file:line:column, exit 1 (line = 4321 + 2 header lines + 1)"},
		{"cut recording", []string{"replay", "--config", cfg, cut}, 0, false, []string{"warning", "mid-window", "line"}, "data ending mid-window: windows printed, one warning, exit 0"},
		{"help", []string{"replay", "--help"}, 0, false, nil, "--help exits 0"},
		{"root help", []string{"--help"}, 0, false, nil, "--help exits 0"},
		{"unknown command", []string{"frobnicate"}, 2, true, []string{"unknown command"}, "usage error"},
	}
	for _, tc := range cases {
		t.Run(tc.name, func(t *testing.T) {
			r := runCmd(tc.args...)
			if r.code != tc.code {
				t.Errorf("exit %d, want %d (%s)\nstderr: %s", r.code, tc.code, tc.src, r.stderr)
			}
			if tc.stdoutNone && r.stdout != "" {
				t.Errorf("stdout not empty on error: %q", r.stdout)
			}
			for _, s := range tc.errHas {
				if !strings.Contains(r.stderr, s) {
					t.Errorf("stderr lacks %q (%s):\n%s", s, tc.src, r.stderr)
				}
			}
		})
	}
	t.Run("cut recording prints complete windows", func(t *testing.T) {
		r := runCmd("replay", "--config", cfg, cut)
		if n := strings.Count(r.stdout, "\n"); n != 3 {
			t.Errorf("%d records, want the 3 complete windows", n)
		}
		if strings.Count(r.stderr, "warning") != 1 {
			t.Errorf("want exactly one warning, got:\n%s", r.stderr)
		}
	})
}

// TestBadSampleFlagged: a NaN sample flags its window bad_sample with null
// values, and processing continues (DESIGN errors table).
func TestBadSampleFlagged(t *testing.T) {
	dir := t.TempDir()
	cfg := writeFile(t, dir, "cfg.yaml", singleCfg)
	in := writeCSV(t, dir, 2048*4, func(i int, row string) string {
		if i == 2048+7 {
			return "NaN,1.0"
		}
		return row
	})
	r := runCmd("replay", "--config", cfg, in)
	if r.code != 0 {
		t.Fatalf("exit %d: %s", r.code, r.stderr)
	}
	lines := strings.Split(strings.TrimSpace(r.stdout), "\n")
	if len(lines) != 4 {
		t.Fatalf("%d records, want 4", len(lines))
	}
	for k, l := range lines {
		var rec struct {
			Flags    []string `json:"flags"`
			Channels map[string]struct {
				RMS *float64 `json:"rms"`
			} `json:"channels"`
		}
		if err := json.Unmarshal([]byte(l), &rec); err != nil {
			t.Fatal(err)
		}
		bad := strings.Contains(strings.Join(rec.Flags, ","), "bad_sample")
		if bad != (k == 1) {
			t.Errorf("record %d: bad_sample=%v, want %v", k, bad, k == 1)
		}
		if k == 1 && rec.Channels["v"].RMS != nil {
			t.Errorf("record 1: v rms %v, want null after a NaN sample", *rec.Channels["v"].RMS)
		}
		if k != 1 && rec.Channels["v"].RMS == nil {
			t.Errorf("record %d: v rms null on clean data", k)
		}
	}
}

// TestReplayLaggingLoad: a sinusoidal 230 V / 10 A load at PF 0.8 lagging
// reads P = V·I·cos φ = 1840 W, Q1 = V·I·sin φ = 1380 var (closed form).
func TestReplayLaggingLoad(t *testing.T) {
	dir := t.TempDir()
	cfg := writeFile(t, dir, "cfg.yaml", singleCfg)
	in := writeCSV(t, dir, 10240*3, nil)
	for _, iv := range []string{"200ms", "3s"} {
		r := runCmd("replay", "--config", cfg, "--interval", iv, in)
		if r.code != 0 {
			t.Fatalf("exit %d: %s", r.code, r.stderr)
		}
		first := strings.SplitN(r.stdout, "\n", 2)[0]
		var rec struct {
			Interval string `json:"interval"`
			Phases   map[string]struct {
				P  float64 `json:"p_w"`
				Q  float64 `json:"q_var"`
				PF float64 `json:"pf"`
			} `json:"phases"`
		}
		if err := json.Unmarshal([]byte(first), &rec); err != nil {
			t.Fatal(err)
		}
		a := rec.Phases["a"]
		// 6-decimal CSV text limits agreement to about 1e-6 relative; 0.05 W is ample
		if rec.Interval != iv || math.Abs(a.P-1840) > 0.05 || math.Abs(a.Q-1380) > 0.05 || math.Abs(a.PF-0.8) > 1e-5 {
			t.Errorf("%s: interval %s P %v Q %v PF %v, want 1840 W, 1380 var, 0.8 (closed form)", iv, rec.Interval, a.P, a.Q, a.PF)
		}
	}
}

// TestReplayWAV reads the same signal from a 32-bit float WAV file.
func TestReplayWAV(t *testing.T) {
	dir := t.TempDir()
	cfg := writeFile(t, dir, "cfg.yaml", strings.Replace(singleCfg, "sample_rate_hz: 10240\n", "", 1))
	var data bytes.Buffer
	phi := math.Acos(0.8)
	for n := range 10240 {
		a := 2 * math.Pi * 50 * float64(n) / 10240
		binary.Write(&data, binary.LittleEndian, float32(230*math.Sqrt2*math.Cos(a)))
		binary.Write(&data, binary.LittleEndian, float32(10*math.Sqrt2*math.Cos(a-phi)))
	}
	var b bytes.Buffer
	b.WriteString("RIFF")
	binary.Write(&b, binary.LittleEndian, uint32(36+data.Len()))
	b.WriteString("WAVEfmt ")
	for _, v := range []any{uint32(16), uint16(3), uint16(2), uint32(10240), uint32(10240 * 8), uint16(8), uint16(32)} {
		binary.Write(&b, binary.LittleEndian, v)
	}
	b.WriteString("data")
	binary.Write(&b, binary.LittleEndian, uint32(data.Len()))
	b.Write(data.Bytes())
	in := writeFile(t, dir, "rec.wav", b.String())
	r := runCmd("replay", "--config", cfg, "--format", "csv", in)
	if r.code != 0 {
		t.Fatalf("exit %d: %s", r.code, r.stderr)
	}
	if n := strings.Count(r.stdout, "\n"); n != 6 { // header + 5 windows: 10240 samples / 2048 per 10-cycle window at 50 Hz (closed form)
		t.Errorf("%d lines, want header and 5 windows", n)
	}
}

func TestVersionAndDefaults(t *testing.T) {
	// the kernel named is the one goertzel reports for this build and CPU
	// (README, Commands: gridloupe version)
	if r := runCmd("version"); r.code != 0 || !strings.HasPrefix(r.stdout, "gridloupe ") ||
		!strings.HasSuffix(r.stdout, ", Goertzel kernel "+goertzel.Kernel()+"\n") {
		t.Errorf("version: %+v", r)
	}
	r := runCmd("config", "--defaults")
	if r.code != 0 || !strings.Contains(r.stdout, "lock_min_pct") {
		t.Errorf("config --defaults: exit %d, output lacks lock_min_pct", r.code)
	}
}
