package main

import (
	"bytes"
	"encoding/binary"
	"fmt"
	"math"
	"os"
	"path/filepath"
	"strings"
	"testing"
)

// writeCOMTRADE writes six-channel counts as a COMTRADE recording of file
// type ft (IEEE C37.111-1999/2013 layout): VA..VC primary with a = 1, the
// currents in secondary units with a = 0.5 and a 2:1 ratio, so every value
// is the count exactly (0.5·x·2/1), one digital channel. Returns the .cfg path.
func writeCOMTRADE(t *testing.T, dir, ft string, vals []float64) string {
	t.Helper()
	n := len(vals) / 6
	year := "1999"
	if ft == "BINARY32" || ft == "FLOAT32" {
		year = "2013"
	}
	var c strings.Builder
	fmt.Fprintf(&c, "North Weir DC-2,dc2-rec,%s\n7,6A,1D\n", year)
	for i, id := range []string{"VA", "VB", "VC", "IA", "IB", "IC"} {
		if i < 3 {
			fmt.Fprintf(&c, "%d,%s,%c,bus,V,1,0,0,-32767,32767,400,400,P\n", i+1, id, 'A'+i)
		} else {
			fmt.Fprintf(&c, "%d,%s,%c,drive,A,0.5,0,0,-32767,32767,2,1,S\n", i+1, id, 'A'+i-3)
		}
	}
	fmt.Fprintf(&c, "1,trip,,drive,0\n50\n1\n10240,%d\n01/03/2026,10:00:00.000000\n01/03/2026,10:00:01.000000\n%s\n1\n", n, ft)
	cfg := filepath.Join(dir, "rec-"+strings.ToLower(ft)+".cfg")
	if err := os.WriteFile(cfg, []byte(c.String()), 0o644); err != nil {
		t.Fatal(err)
	}
	var d bytes.Buffer
	le := binary.LittleEndian
	for k := range n {
		ts := uint32(math.Round(float64(k) * 1e6 / 10240))
		x := vals[k*6 : k*6+6] // currents stored as secondary values: 0.5·x·2/1 = x
		if ft == "ASCII" {
			fmt.Fprintf(&d, "%d,%d", k+1, ts)
			for _, v := range x {
				fmt.Fprintf(&d, ",%g", v)
			}
			d.WriteString(",0\r\n")
			continue
		}
		d.Write(le.AppendUint32(nil, uint32(k+1)))
		d.Write(le.AppendUint32(nil, ts))
		for _, v := range x {
			switch ft {
			case "BINARY":
				d.Write(le.AppendUint16(nil, uint16(int16(v))))
			case "BINARY32":
				d.Write(le.AppendUint32(nil, uint32(int32(v))))
			case "FLOAT32":
				d.Write(le.AppendUint32(nil, math.Float32bits(float32(v))))
			}
		}
		d.Write([]byte{0, 0})
	}
	if err := os.WriteFile(strings.TrimSuffix(cfg, ".cfg")+".dat", d.Bytes(), 0o644); err != nil {
		t.Fatal(err)
	}
	return cfg
}

// comtradeCountsCfg is countsCfg with the currents scaled as counts too:
// the COMTRADE values are primary counts, scaled by the same 0.02/0.01.
// Channel names match the ids case-insensitively; ic is mapped by index.
var comtradeCountsCfg = strings.Replace(countsCfg, "{name: ic, kind: current, phase: c, scale: 0.01}",
	"{name: ic, kind: current, phase: c, scale: 0.01, comtrade: 6}", 1)

// TestSameFiguresCOMTRADE: the same samples as CSV and as COMTRADE ASCII,
// BINARY, BINARY32 and FLOAT32 give byte-identical records, timed from the
// .cfg's first-sample time (DESIGN "Sources"; integer counts are exact in
// every type, and 0.5·x·2/1 is exact in binary floating point).
func TestSameFiguresCOMTRADE(t *testing.T) {
	dir := t.TempDir()
	cfg := writeFile(t, dir, "c.yaml", comtradeCountsCfg)
	vals := countSamples(3.2)
	want := replayOut(t, nil, "--config", cfg, "--start", "2026-03-01T10:00:00Z", countsCSV(t, dir, vals))
	for _, ft := range []string{"ASCII", "BINARY", "BINARY32", "FLOAT32"} {
		t.Run(ft, func(t *testing.T) {
			got := replayOut(t, nil, "--config", cfg, writeCOMTRADE(t, dir, ft, vals))
			if got != want {
				t.Errorf("records differ from the CSV replay:\n got %.300s\nwant %.300s", got, want)
			}
		})
	}
}

// TestReplayCOMTRADEErrors: a bad .cfg line is a usage error naming file
// and line (exit 2); a missing .dat names the file (exit 1); an unknown
// channel lists the ids.
func TestReplayCOMTRADEErrors(t *testing.T) {
	dir := t.TempDir()
	cfg := writeFile(t, dir, "c.yaml", comtradeCountsCfg)
	rec := writeCOMTRADE(t, dir, "ASCII", countSamples(0.3))
	b, _ := os.ReadFile(rec)
	bad := writeFile(t, dir, "bad.cfg", strings.Replace(string(b), "ASCII\n", "HEX\n", 1))
	os.WriteFile(filepath.Join(dir, "bad.dat"), nil, 0o644)
	noDat := writeFile(t, dir, "nodat.cfg", string(b))
	odd := writeFile(t, dir, "odd.yaml", strings.Replace(comtradeCountsCfg, "name: vb,", "name: vx,", 1))
	for _, c := range []struct {
		args []string
		code int
		want string
	}{
		{[]string{"--config", cfg, bad}, 2, "bad.cfg:15:1: file type \"HEX\": allowed are ASCII, BINARY, BINARY32, FLOAT32"},
		{[]string{"--config", cfg, noDat}, 1, "nodat.cfg: no .dat file beside it"},
		{[]string{"--config", odd, rec}, 2, "channel \"vx\" is not an analog channel id (the file has: VA, VB, VC, IA, IB, IC)"},
	} {
		r := runCmd(append([]string{"replay"}, c.args...)...)
		if r.code != c.code || !strings.Contains(r.stderr, c.want) || r.stdout != "" {
			t.Errorf("%v: exit %d, stderr %q; want exit %d and %q, nothing on stdout", c.args, r.code, r.stderr, c.code, c.want)
		}
	}
}
