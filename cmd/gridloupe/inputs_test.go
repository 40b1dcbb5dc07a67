package main

import (
	"bytes"
	"context"
	"encoding/json"
	"fmt"
	"math"
	"os"
	"path/filepath"
	"strings"
	"testing"
	"time"

	"github.com/gridloupe/gridloupe/stream/pcm"
)

// countsCfg is a three-phase cabinet whose raw values are ADC counts:
// 0.02 V and 0.01 A per count (an invented front end), so the same samples
// are exact in CSV and in every PCM format (integers below 2^15).
const countsCfg = `site: north-weir-dc2
nominal: {frequency_hz: 50, voltage_v: 230}
wiring: wye
sample_rate_hz: 10240
il_a: 160
channels:
  - {name: va, kind: voltage, phase: a, scale: 0.02}
  - {name: vb, kind: voltage, phase: b, scale: 0.02}
  - {name: vc, kind: voltage, phase: c, scale: 0.02}
  - {name: ia, kind: current, phase: a, scale: 0.01}
  - {name: ib, kind: current, phase: b, scale: 0.01}
  - {name: ic, kind: current, phase: c, scale: 0.01}
`

// countSamples generates seconds of a balanced wye supply at 50.02 Hz with
// drive currents (5th and 7th), as whole ADC counts, interleaved.
func countSamples(seconds float64) []float64 {
	const fs, f = 10240.0, 50.02
	n := int(seconds * fs)
	out := make([]float64, 0, n*6)
	for k := range n {
		w := 2 * math.Pi * f * float64(k) / fs
		for p := range 3 {
			sh := -2 * math.Pi / 3 * float64(p)
			out = append(out, math.Round(230*math.Sqrt2/0.02*(math.Cos(w+sh)+0.02*math.Cos(5*(w+sh)+0.3))))
		}
		for p := range 3 {
			sh := -2*math.Pi/3*float64(p) - 0.4
			out = append(out, math.Round(100*math.Sqrt2/0.01*(math.Cos(w+sh)+0.18*math.Cos(5*(w+sh)+2)+0.1*math.Cos(7*(w+sh)-1))))
		}
	}
	return out
}

func countsCSV(t *testing.T, dir string, vals []float64) string {
	t.Helper()
	var b strings.Builder
	b.WriteString("va,vb,vc,ia,ib,ic\n")
	for i := 0; i < len(vals); i += 6 {
		fmt.Fprintf(&b, "%g,%g,%g,%g,%g,%g\n", vals[i], vals[i+1], vals[i+2], vals[i+3], vals[i+4], vals[i+5])
	}
	return writeFile(t, dir, "counts.csv", b.String())
}

func replayOut(t *testing.T, stdin []byte, args ...string) string {
	t.Helper()
	var out, errb bytes.Buffer
	if err := run(context.Background(), append([]string{"replay"}, args...), bytes.NewReader(stdin), &out, &errb); err != nil {
		t.Fatalf("replay %v: %v\n%s", args, err, errb.String())
	}
	return out.String()
}

// TestSameFiguresPCM: the same samples analysed as CSV and as raw PCM (each
// format, from a file and from standard input) and as GLF1 frames give
// byte-identical records (DESIGN "Sources"; integer counts are exact in
// every format, so no rounding tolerance is needed).
func TestSameFiguresPCM(t *testing.T) {
	dir := t.TempDir()
	cfg := writeFile(t, dir, "c.yaml", countsCfg)
	vals := countSamples(3.2)
	want := replayOut(t, nil, "--config", cfg, "--start", "2026-03-01T10:00:00Z", countsCSV(t, dir, vals))
	if strings.Count(want, "\n") < 15 {
		t.Fatalf("CSV replay printed %d records, want 16", strings.Count(want, "\n"))
	}
	for _, f := range []pcm.Format{pcm.S16LE, pcm.S24LE, pcm.S32LE, pcm.F32LE} {
		b := make([]byte, len(vals)*f.Bytes())
		f.Encode(b, vals)
		path := filepath.Join(dir, "counts."+f.String())
		if err := os.WriteFile(path, b, 0o644); err != nil {
			t.Fatal(err)
		}
		var framed bytes.Buffer
		w, _ := pcm.NewGLF1Writer(&framed, 6, f)
		if err := w.Write(vals, 333); err != nil {
			t.Fatal(err)
		}
		for _, c := range []struct {
			name  string
			stdin []byte
			args  []string
		}{
			{"file", nil, []string{"--pcm", f.String(), path}},
			{"stdin", b, []string{"--pcm", f.String(), "-"}},
			{"glf1 stdin", framed.Bytes(), []string{"--pcm", f.String(), "--framing", "glf1", "-"}},
		} {
			t.Run(f.String()+"/"+c.name, func(t *testing.T) {
				got := replayOut(t, c.stdin, append([]string{"--config", cfg, "--start", "2026-03-01T10:00:00Z"}, c.args...)...)
				if got != want {
					t.Errorf("records differ from the CSV replay of the same samples:\n got %.300s\nwant %.300s", got, want)
				}
			})
		}
	}
}

// TestGLF1LossesInRecords: a GLF1 stream with a dropped and a corrupted
// frame gives, for every window away from them, the CSV replay's record
// (same start, same values); the windows holding their samples are flagged
// gap with null values; none is stitched.
func TestGLF1LossesInRecords(t *testing.T) {
	const fs, per = 10240, 512
	dir := t.TempDir()
	cfg := writeFile(t, dir, "c.yaml", countsCfg)
	vals := countSamples(6)
	csvOut := replayOut(t, nil, "--config", cfg, countsCSV(t, dir, vals))
	lost := map[int]bool{60: true, 100: true} // frame 60 dropped, 100 corrupted
	framed := framesOf(vals, per, 60, 100)
	var errb bytes.Buffer
	var out bytes.Buffer
	if err := run(context.Background(), []string{"replay", "--config", cfg, "--pcm", "s16le", "--framing", "glf1", "-"},
		bytes.NewReader(framed), &out, &errb); err != nil {
		t.Fatal(err)
	}
	if !strings.Contains(errb.String(), "1 bad frames skipped") || !strings.Contains(errb.String(), fmt.Sprintf("%d samples per channel missing", 2*per)) {
		t.Errorf("stderr %q, want the bad frame and %d missing samples reported", errb.String(), 2*per)
	}
	type rec struct {
		Start     string          `json:"start"`
		Duration  float64         `json:"duration_s"`
		Flags     []string        `json:"flags"`
		Channels  json.RawMessage `json:"channels"`
		Total     json.RawMessage `json:"total"`
		FreqHz    *float64        `json:"freq_hz"`
		raw       string
		startTime time.Time
	}
	parse := func(s string) []rec {
		var rs []rec
		for _, line := range strings.Split(strings.TrimSpace(s), "\n") {
			var r rec
			if err := json.Unmarshal([]byte(line), &r); err != nil {
				t.Fatal(err)
			}
			r.raw = line
			r.startTime, _ = time.Parse(time.RFC3339Nano, r.Start)
			rs = append(rs, r)
		}
		return rs
	}
	ref := map[string]rec{}
	for _, r := range parse(csvOut) {
		ref[r.Start] = r
	}
	base := time.Unix(0, 0).UTC()
	gaps, same := 0, 0
	for _, r := range parse(out.String()) {
		lo := r.startTime.Sub(base).Seconds() * fs
		hi := lo + r.Duration*fs
		holds := false
		for k := range lost {
			if lo < float64((k+1)*per) && hi > float64(k*per) {
				holds = true
			}
		}
		gap := strings.Contains(strings.Join(r.Flags, ","), "gap")
		switch {
		case holds != gap:
			t.Fatalf("window at %s holds lost samples: %v, flagged gap: %v", r.Start, holds, gap)
		case gap:
			gaps++
			if r.FreqHz != nil || !strings.Contains(string(r.Channels), `"rms":null`) {
				t.Errorf("gap window at %s has values: %.200s", r.Start, r.raw)
			}
		default:
			c, ok := ref[r.Start]
			if !ok {
				continue // after a gap the cut is re-acquired: windows start elsewhere than in the CSV run
			}
			if string(c.Channels) == string(r.Channels) && string(c.Total) == string(r.Total) {
				same++
			}
		}
	}
	if gaps < 2 {
		t.Errorf("%d gap windows, want at least one per lost frame", gaps)
	}
	// windows wholly before the first loss: floor(60·512 / (10·10240/50.02)) = 15
	if same < 15 {
		t.Errorf("only %d windows identical to the CSV run, want at least the 15 before the first loss", same)
	}
}

// TestReplayPCMErrors: missing sample rate, bad format, framing without pcm.
func TestReplayPCMErrors(t *testing.T) {
	dir := t.TempDir()
	noRate := writeFile(t, dir, "n.yaml", strings.Replace(countsCfg, "sample_rate_hz: 10240\n", "", 1))
	cfg := writeFile(t, dir, "c.yaml", countsCfg)
	for _, c := range []struct {
		args []string
		want string
	}{
		{[]string{"--config", noRate, "--pcm", "s16le", "-"}, "carries no sample rate; set sample_rate_hz"},
		{[]string{"--config", cfg, "--pcm", "s16be", "-"}, "allowed are s16le, s24le, s32le, f32le"},
		{[]string{"--config", cfg, "--framing", "glf1", "x.csv"}, "--framing applies to --pcm input only"},
		{[]string{"--config", cfg, "--pcm", "s16le", "--framing", "slip", "-"}, "allowed are raw, glf1"},
	} {
		var out, errb bytes.Buffer
		err := run(context.Background(), append([]string{"replay"}, c.args...), bytes.NewReader(nil), &out, &errb)
		if err == nil || !strings.Contains(err.Error(), c.want) || exitCode(err) != 2 {
			t.Errorf("%v: %v (exit %d), want %q and exit 2", c.args, err, exitCode(err), c.want)
		}
	}
}

// framesOf encodes six-channel counts as s16le GLF1 frames of per samples,
// leaving out frame drop and breaking the CRC of frame corrupt (−1: none).
func framesOf(vals []float64, per, drop, corrupt int) []byte {
	var framed bytes.Buffer
	w, _ := pcm.NewGLF1Writer(&framed, 6, pcm.S16LE)
	for k := 0; k*per*6 < len(vals); k++ {
		m := vals[k*per*6 : min(len(vals), (k+1)*per*6)]
		if k == drop {
			w.Skip(uint64(len(m) / 6))
			continue
		}
		b, _ := w.Frame(m)
		if k == corrupt {
			b[40] ^= 0xFF
		}
		framed.Write(b)
	}
	return framed.Bytes()
}
