package comtrade

import (
	"bytes"
	"encoding/binary"
	"errors"
	"fmt"
	"io"
	"math"
	"os"
	"path/filepath"
	"strings"
	"testing"

	"github.com/gridloupe/gridloupe/stream/input"
)

// record is one .dat row: analog counts and the digital word.
type record struct {
	ts     uint32
	counts []float64
	dig    uint16
}

// encodeDat writes rows in a file type (IEEE C37.111-1999 §7, -2013 §8:
// binary rows are uint32 n, uint32 time stamp, the analog samples, the
// digital channels packed 16 per uint16; ASCII rows the same as text).
func encodeDat(ft string, rows []record) []byte {
	var b bytes.Buffer
	le := binary.LittleEndian
	for i, r := range rows {
		if ft == ASCII {
			fmt.Fprintf(&b, "%d,%d", i+1, r.ts)
			for _, c := range r.counts {
				if math.IsNaN(c) {
					b.WriteString(",")
				} else {
					fmt.Fprintf(&b, ",%g", c)
				}
			}
			fmt.Fprintf(&b, ",%d\r\n", r.dig&1)
			continue
		}
		b.Write(le.AppendUint32(nil, uint32(i+1)))
		b.Write(le.AppendUint32(nil, r.ts))
		for _, c := range r.counts {
			switch ft {
			case Binary:
				v := int16(c)
				if math.IsNaN(c) {
					v = missing16
				}
				b.Write(le.AppendUint16(nil, uint16(v)))
			case Binary32:
				v := int32(c)
				if math.IsNaN(c) {
					v = missing32
				}
				b.Write(le.AppendUint32(nil, uint32(v)))
			case Float32:
				b.Write(le.AppendUint32(nil, math.Float32bits(float32(c))))
			}
		}
		b.Write(le.AppendUint16(nil, r.dig))
	}
	return b.Bytes()
}

// cfgFor returns cfg1999 for n samples in file type ft (2013 for the
// types that need it).
func cfgFor(ft string, n int) string {
	c := strings.Replace(cfg1999, "10240,30720", fmt.Sprintf("10240,%d", n), 1)
	c = strings.Replace(c, "BINARY\n", ft+"\n", 1)
	if ft == Binary32 || ft == Float32 {
		c = strings.Replace(c, ",1999\n", ",2013\n", 1)
	}
	return c
}

func readAllFrames(t *testing.T, d *Reader, nch int) ([]float64, error) {
	t.Helper()
	var out []float64
	dst := make([]float64, 7*nch)
	for range 1 << 20 {
		n, err := d.ReadFrames(dst)
		out = append(out, dst[:n*nch]...)
		if err != nil {
			return out, err
		}
	}
	t.Fatal("no end")
	return nil, nil
}

// TestDatTypes: every file type gives a·x + b in primary units (times
// primary/secondary for an S channel), missing-value markers as NaN.
func TestDatTypes(t *testing.T) {
	rows := []record{
		{0, []float64{1000, 500}, 1}, {98, []float64{-32767, 32767}, 0}, {195, []float64{math.NaN(), 7}, 1},
	}
	// src: C37.111 value = a·x + b; VA: a 0.01 b 0.5 primary; IA: a 0.002
	// secondary with 200/1, so 0.002·x·200 = 0.4·x in primary amperes
	want := [][2]float64{{10.5, 200}, {-327.17, 13106.8}, {math.NaN(), 2.8}}
	for _, ft := range []string{ASCII, Binary, Binary32, Float32} {
		t.Run(ft, func(t *testing.T) {
			c, err := ParseConfig("rec.cfg", []byte(cfgFor(ft, 3)))
			if err != nil {
				t.Fatal(err)
			}
			d, err := NewReader(c, "rec.dat", bytes.NewReader(encodeDat(ft, rows)), []int{1, 0})
			if err != nil {
				t.Fatal(err)
			}
			got, err := readAllFrames(t, d, 2)
			if err != io.EOF {
				t.Fatalf("end %v", err)
			}
			for i, w := range want {
				ia, va := got[2*i], got[2*i+1]
				if !close(va, w[0]) || !close(ia, w[1]) {
					if !(ft == Float32 && i == 2) { // FLOAT32 has no missing marker: NaN stays NaN, checked below
						t.Errorf("row %d: va %v ia %v, want %v %v", i, va, ia, w[0], w[1])
					}
				}
			}
		})
	}
}

// close compares within float64 rounding of a·x + b (1e-12 relative,
// common practice, no source), NaN equal to NaN.
func close(a, b float64) bool {
	if math.IsNaN(a) || math.IsNaN(b) {
		return math.IsNaN(a) && math.IsNaN(b)
	}
	return math.Abs(a-b) <= 1e-12*math.Max(1, math.Abs(b))
}

// TestDatErrors: a cut file, a bad ASCII cell, too few fields.
func TestDatErrors(t *testing.T) {
	rows := []record{{0, []float64{1, 2}, 0}, {98, []float64{3, 4}, 0}}
	c, _ := ParseConfig("rec.cfg", []byte(cfgFor(Binary, 3)))
	d, _ := NewReader(c, "rec.dat", bytes.NewReader(encodeDat(Binary, rows)), []int{0, 1})
	got, err := readAllFrames(t, d, 2)
	if len(got) != 4 || !errors.Is(err, input.ErrTruncated) || !strings.Contains(err.Error(), "after 2 of the 3 samples") {
		t.Errorf("short file: %d values, %v", len(got), err)
	}
	b := encodeDat(Binary, rows)
	d, _ = NewReader(c, "rec.dat", bytes.NewReader(b[:len(b)-3]), []int{0, 1})
	if _, err := readAllFrames(t, d, 2); !errors.Is(err, input.ErrTruncated) || !strings.Contains(err.Error(), "rec.dat: offset 14: the file ends 11 bytes into a 14-byte record") {
		t.Errorf("cut record: %v", err)
	}
	ca, _ := ParseConfig("rec.cfg", []byte(cfgFor(ASCII, 3)))
	for _, tc := range []struct{ text, want string }{
		{"1,0,5,6,0\n2,98,5,x,0\n", "rec.dat:2:4: analog value \"x\" (channel \"IA\") is not a number"},
		{"1,0,5\n", "rec.dat:1: 3 fields, want 5"},
		{"1,zz,5,6,0\n", "rec.dat:1:2: time stamp \"zz\" is not a number"},
	} {
		d, _ := NewReader(ca, "rec.dat", strings.NewReader(tc.text), []int{0, 1})
		_, err := readAllFrames(t, d, 2)
		if err == nil || !strings.HasPrefix(err.Error(), tc.want) || !errors.Is(err, ErrData) {
			t.Errorf("%q: %v, want %q", tc.text, err, tc.want)
		}
	}
}

// TestOpenRates: Open finds the .dat beside the .cfg; with nrates 0 the
// rate comes from uniform time stamps (within 0.1 % of a period or one
// stamp unit, DESIGN "Sources"); uneven stamps or two rates are refused.
func TestOpenRates(t *testing.T) {
	dir := t.TempDir()
	write := func(cfg string, rows []record) string {
		p := filepath.Join(dir, "rec.cfg")
		if err := os.WriteFile(p, []byte(cfg), 0o644); err != nil {
			t.Fatal(err)
		}
		if err := os.WriteFile(filepath.Join(dir, "rec.DAT"), encodeDat(ASCII, rows), 0o644); err != nil {
			t.Fatal(err)
		}
		return p
	}
	var rows []record
	for i := range 100 {
		// 4 kHz: 250 µs per sample, timemult 0.5 → stamps count half-µs
		rows = append(rows, record{ts: uint32(i * 500), counts: []float64{1, 2}})
	}
	base := strings.Replace(cfgFor(ASCII, 100), "1\n10240,100\n", "0\n0,100\n", 1)
	base = strings.Replace(base, "ASCII\n1\n", "ASCII\n0.5\n", 1)
	r, err := Open(write(base, rows), []string{"VA", "IA"}, nil)
	if err != nil {
		t.Fatal(err)
	}
	defer r.Close()
	if math.Abs(r.Rate-4000) > 1e-9 || !strings.HasSuffix(r.DatPath, "rec.DAT") {
		t.Errorf("rate %v from %s, want 4000 Hz (500 half-µs stamps)", r.Rate, r.DatPath)
	}
	rows[50].ts += 10 // 5 µs off: 2 % of a period
	if _, err := Open(write(base, rows), []string{"VA", "IA"}, nil); !errors.Is(err, ErrRate) || !strings.Contains(err.Error(), "time stamp 51") {
		t.Errorf("uneven stamps: %v", err)
	}
	two := strings.Replace(cfgFor(ASCII, 100), "1\n10240,100\n", "2\n10240,50\n5120,100\n", 1)
	if _, err := Open(write(two, rows), []string{"VA", "IA"}, nil); !errors.Is(err, ErrRate) {
		t.Errorf("two rates: %v", err)
	}
}
