package iio

import (
	"context"
	"encoding/binary"
	"errors"
	"io"
	"math"
	"os"
	"path/filepath"
	"strings"
	"syscall"
	"testing"
	"time"

	"github.com/gridloupe/gridloupe/stream"
	"github.com/gridloupe/gridloupe/stream/iio/iiotest"
)

// fakeTree builds a sysfs directory for an invented 4-channel ADC
// ("dc2-adc") under a temp root, as the kernel ABI lays it out: name,
// sampling_frequency, buffer/{enable,length}, scan_elements/*_{en,index,type},
// per-channel and shared scale/offset. voltage0 is le:s16/16, voltage1
// be:s24/32>>8, current0 le:s12/16>>4, voltage3 (not used, enabled before
// we start) le:s16/16, and a le:s64/64 timestamp. Returns sysfs and dev roots.
func fakeTree(t *testing.T, devNode func(path string)) (sysfs, dev string) {
	t.Helper()
	tr, err := iiotest.New(t.TempDir(), "dc2-adc", 10240, []iiotest.Element{
		{Name: "in_voltage0", Type: "le:s16/16>>0"}, {Name: "in_voltage1", Type: "be:s24/32>>8"},
		{Name: "in_current0", Type: "le:s12/16>>4"}, {Name: "in_voltage3", Type: "le:s16/16>>0", Enabled: true},
		{Name: "in_timestamp", Type: "le:s64/64>>0"},
	}, map[string]string{
		"in_voltage_scale":   "2.0", // shared: 2 mV per count
		"in_voltage1_scale":  "0.5", // per channel wins
		"in_current0_scale":  "1000",
		"in_current0_offset": "-3",
	})
	if err != nil {
		t.Fatal(err)
	}
	if devNode != nil {
		devNode(tr.Node)
	}
	return tr.Sysfs, tr.Dev
}

// scans encodes scans of the fake device's enabled layout: voltage0 at 0
// (2 bytes), voltage1 at 4 (4, big-endian, <<8), current0 at 8 (2, <<4),
// timestamp at 16 (8): 24 bytes per scan.
func scans(raw [][3]int64, ts []int64) []byte {
	b := make([]byte, 24*len(raw))
	for i, r := range raw {
		s := b[24*i:]
		binary.LittleEndian.PutUint16(s[0:], uint16(int16(r[0])))
		binary.BigEndian.PutUint32(s[4:], uint32(int32(r[1])<<8))
		binary.LittleEndian.PutUint16(s[8:], uint16(int16(r[2])<<4))
		binary.LittleEndian.PutUint64(s[16:], uint64(ts[i]))
	}
	return b
}

func read(t *testing.T, path string) string {
	t.Helper()
	b, err := os.ReadFile(path)
	if err != nil {
		t.Fatal(err)
	}
	return strings.TrimSpace(string(b))
}

// TestDeviceReads: discovery by name, channels enabled and the stray one
// disabled, length and rate written, values (raw + offset)·scale/1000
// (DESIGN "Sources"), the first timestamp as wall time, a timestamp step
// as a gap of exactly the missing scans; Close disables the buffer and
// restores every _en file and the length.
func TestDeviceReads(t *testing.T) {
	const period = int64(97656) // ns: 1e9/10240 Hz rounded down; the fake stamps are whole ns
	t0 := time.Date(2026, 3, 1, 10, 0, 0, 0, time.UTC).UnixNano()
	raw := [][3]int64{{100, -200, 7}, {-32768, 8388607, -2048}, {1, 2, 3}, {4, 5, 6}}
	ts := []int64{t0, t0 + period, t0 + 2*period + 5*period, t0 + 8*period} // 5 scans lost before the third
	sysfs, dev := fakeTree(t, func(p string) { os.WriteFile(p, scans(raw, ts), 0o644) })
	s, err := Open(Config{Device: "dc2-adc", Channels: []string{"voltage1", "voltage0", "current0"}, Sysfs: sysfs, Dev: dev,
		BufferLength: 4096, SampleRate: 10240})
	if err != nil {
		t.Fatal(err)
	}
	d := filepath.Join(sysfs, "iio:device0")
	for rel, want := range map[string]string{"buffer/enable": "1", "buffer/length": "4096", "sampling_frequency": "10240",
		"scan_elements/in_voltage0_en": "1", "scan_elements/in_voltage1_en": "1", "scan_elements/in_current0_en": "1",
		"scan_elements/in_voltage3_en": "0", "scan_elements/in_timestamp_en": "1"} {
		if got := read(t, filepath.Join(d, rel)); got != want {
			t.Errorf("while running %s = %q, want %q", rel, got, want)
		}
	}
	if s.ScanBytes() != 24 || s.SampleRate() != 10240 {
		t.Errorf("scan %d bytes at %v Hz, want 24 at 10240", s.ScanBytes(), s.SampleRate())
	}
	if first, err := s.First(); err != nil || !first.Equal(time.Unix(0, t0)) {
		t.Errorf("first sample at %v (%v), want the first timestamp %v", first, err, time.Unix(0, t0).UTC())
	}
	var got []float64
	var gaps []uint64
	dst := make([]float64, 3*16)
	for {
		n, err := s.ReadFrames(dst)
		got = append(got, dst[:3*n]...)
		var g *stream.Gap
		if errors.As(err, &g) {
			gaps = append(gaps, g.Missing)
			continue
		}
		if err != nil {
			if !errors.Is(err, ErrVanished) {
				t.Fatalf("end of the fake device: %v, want ErrVanished (a device does not end)", err)
			}
			break
		}
	}
	// src: DESIGN "Sources": ((raw + offset_iio) · scale_iio / 1000); voltage1
	// has its own 0.5 (the shared 2.0 is overridden), voltage0 the shared 2.0,
	// current0 scale 1000 offset -3
	want := []float64{-200 * 0.5 / 1000, 100 * 2.0 / 1000, (7 - 3) * 1000 / 1000.0,
		8388607 * 0.5 / 1000, -32768 * 2.0 / 1000, (-2048 - 3) * 1.0,
		2 * 0.5 / 1000, 1 * 2.0 / 1000, 0, 5 * 0.5 / 1000, 4 * 2.0 / 1000, 3}
	if len(got) != len(want) {
		t.Fatalf("%d values, want %d", len(got), len(want))
	}
	for i := range want {
		if math.Abs(got[i]-want[i]) > 1e-12 {
			t.Errorf("value %d = %v, want %v", i, got[i], want[i])
		}
	}
	if len(gaps) != 1 || gaps[0] != 5 {
		t.Errorf("gaps %v, want one of 5 scans (a 6-period timestamp step)", gaps)
	}
	if err := s.Close(); err != nil {
		t.Fatal(err)
	}
	_ = s.Close()
	for rel, want := range map[string]string{"buffer/enable": "0", "buffer/length": "128",
		"scan_elements/in_voltage0_en": "0", "scan_elements/in_voltage1_en": "0", "scan_elements/in_current0_en": "0",
		"scan_elements/in_voltage3_en": "1", "scan_elements/in_timestamp_en": "0"} {
		if got := read(t, filepath.Join(d, rel)); got != want {
			t.Errorf("after Close %s = %q, want %q restored", rel, got, want)
		}
	}
}

// TestDeviceProblems: a missing attribute, an unknown device or channel,
// no buffer: a clear error, and the tree left as it was.
func TestDeviceProblems(t *testing.T) {
	cases := []struct {
		name   string
		break_ func(d string)
		cfg    Config
		want   string
	}{
		{"unknown device", nil, Config{Device: "other", Channels: []string{"voltage0"}}, `no device "other" under`},
		{"unknown channel", nil, Config{Device: "iio:device0", Channels: []string{"voltage7"}}, "has no scan element in_voltage7"},
		{"missing type", func(d string) { os.Remove(filepath.Join(d, "scan_elements/in_voltage0_type")) },
			Config{Device: "dc2-adc", Channels: []string{"voltage0"}}, "in_voltage0_type"},
		{"bad type", func(d string) {
			os.WriteFile(filepath.Join(d, "scan_elements/in_voltage0_type"), []byte("le:s20/16>>0"), 0o644)
		},
			Config{Device: "dc2-adc", Channels: []string{"voltage0"}}, "bits must be 1 to storagebits"},
		{"no rate", func(d string) { os.Remove(filepath.Join(d, "sampling_frequency")) },
			Config{Device: "dc2-adc", Channels: []string{"voltage0"}}, "has no sampling_frequency attribute"},
		{"bad scale", func(d string) { os.WriteFile(filepath.Join(d, "in_voltage_scale"), []byte("two"), 0o644) },
			Config{Device: "dc2-adc", Channels: []string{"voltage0"}}, `in_voltage_scale: "two" is not a number`},
		{"no buffer", func(d string) { os.RemoveAll(filepath.Join(d, "buffer")) },
			Config{Device: "dc2-adc", Channels: []string{"voltage0"}}, "neither buffer/enable nor buffer0/enable"},
		{"no device node", func(d string) {}, Config{Device: "dc2-adc", Channels: []string{"voltage0"}}, "iio:device0: no such file"},
	}
	for _, tc := range cases {
		t.Run(tc.name, func(t *testing.T) {
			sysfs, dev := fakeTree(t, nil)
			d := filepath.Join(sysfs, "iio:device0")
			if tc.break_ != nil {
				tc.break_(d)
			}
			tc.cfg.Sysfs, tc.cfg.Dev = sysfs, dev
			_, err := Open(tc.cfg)
			if err == nil || !errors.Is(err, ErrDevice) || !strings.Contains(err.Error(), tc.want) {
				t.Fatalf("Open: %v, want ErrDevice mentioning %q", err, tc.want)
			}
			if got := read(t, filepath.Join(d, "scan_elements/in_voltage3_en")); got != "1" {
				t.Errorf("in_voltage3_en = %q after a failed Open, want 1 restored", got)
			}
			if b, err := os.ReadFile(filepath.Join(d, "buffer/enable")); err == nil && strings.TrimSpace(string(b)) != "0" {
				t.Errorf("buffer left enabled after a failed Open")
			}
		})
	}
}

// fifoRig opens the fake device on a FIFO (a character device stands in)
// and returns the source and the FIFO's writer end.
func fifoRig(t *testing.T) (*Source, *os.File, string) {
	t.Helper()
	mk := func(p string) {
		if err := syscall.Mkfifo(p, 0o600); err != nil {
			t.Skip("no FIFOs here:", err)
		}
	}
	sysfs, dev := fakeTree(t, mk)
	node := filepath.Join(dev, "iio:device0")
	wch := make(chan *os.File, 1)
	go func() { // opening a FIFO waits for both ends
		w, err := os.OpenFile(node, os.O_WRONLY, 0)
		if err != nil {
			w = nil
		}
		wch <- w
	}()
	s, err := Open(Config{Device: "iio:device0", Channels: []string{"voltage1", "voltage0", "current0"}, Sysfs: sysfs, Dev: dev})
	if err != nil {
		t.Fatal(err)
	}
	t.Cleanup(func() { s.Close() })
	w := <-wch
	if w == nil {
		t.Fatal("cannot open the FIFO for writing")
	}
	t.Cleanup(func() { w.Close() })
	t0 := time.Now().UnixNano()
	w.Write(scans([][3]int64{{1, 0, 0}, {2, 0, 0}}, []int64{t0, t0 + 97656}))
	dst := make([]float64, 3*8)
	if n, err := s.ReadFrames(dst); n != 2 || err != nil {
		t.Fatalf("ReadFrames = %d, %v; want the 2 scans written", n, err)
	}
	return s, w, sysfs
}

// TestDeviceStop: a read blocked on a silent device is released when the
// context ends, with io.EOF (the run is ending, not failing).
func TestDeviceStop(t *testing.T) {
	s, _, _ := fifoRig(t)
	ctx, cancel := context.WithCancel(context.Background())
	release := s.Stop(ctx)
	defer release()
	done := make(chan error, 1)
	go func() { _, err := s.ReadFrames(make([]float64, 3*8)); done <- err }()
	time.Sleep(50 * time.Millisecond)
	cancel()
	select {
	case err := <-done:
		if err != io.EOF {
			t.Errorf("released read: %v, want io.EOF", err)
		}
	case <-time.After(5 * time.Second):
		t.Fatal("a blocked read was not released 5 s after the context ended")
	}
	if err := s.Close(); err != nil {
		t.Errorf("Close after Stop: %v", err)
	}
}

// TestDeviceVanishes: a device whose sysfs directory disappears and whose
// node stops delivering ends with ErrVanished naming it.
func TestDeviceVanishes(t *testing.T) {
	s, w, sysfs := fifoRig(t)
	os.RemoveAll(filepath.Join(sysfs, "iio:device0"))
	w.Close()
	_, err := s.ReadFrames(make([]float64, 3*8))
	if !errors.Is(err, ErrVanished) || !strings.Contains(err.Error(), "iio:device0 is gone") {
		t.Errorf("read on a vanished device: %v, want ErrVanished saying it is gone", err)
	}
}

// TestDeviceRestoredOnPanic: a panic in the goroutine that reads the
// device unwinds through the owner's deferred Close (as runDaemon defers
// it around the pipeline), so the buffer is disabled and the _en files are
// restored before the panic goes on.
func TestDeviceRestoredOnPanic(t *testing.T) {
	sysfs, dev := fakeTree(t, func(p string) { os.WriteFile(p, make([]byte, 24*4), 0o644) })
	d := filepath.Join(sysfs, "iio:device0")
	func() {
		defer func() { _ = recover() }()
		s, err := Open(Config{Device: "dc2-adc", Channels: []string{"voltage0", "voltage1", "current0"}, Sysfs: sysfs, Dev: dev})
		if err != nil {
			t.Fatal(err)
		}
		defer s.Close()
		if read(t, filepath.Join(d, "buffer/enable")) != "1" {
			t.Fatal("buffer not enabled")
		}
		panic("a programmer error mid-run")
	}()
	if got := read(t, filepath.Join(d, "buffer/enable")); got != "0" {
		t.Errorf("buffer/enable = %q after the panic, want 0", got)
	}
	if got := read(t, filepath.Join(d, "scan_elements/in_voltage3_en")); got != "1" {
		t.Errorf("in_voltage3_en = %q after the panic, want 1 restored", got)
	}
}

// rateDevice turns the fake device's sampling_frequency into a FIFO served
// by a goroutine that plays a driver which rounds a written rate to one it
// supports: it takes the write, then answers the read-back with answer.
// written receives what the source wrote.
func rateDevice(t *testing.T, dir, answer string) (written chan string) {
	t.Helper()
	p := filepath.Join(dir, "sampling_frequency")
	if err := os.Remove(p); err != nil {
		t.Fatal(err)
	}
	if err := syscall.Mkfifo(p, 0o600); err != nil {
		t.Skip("no FIFOs here:", err)
	}
	written = make(chan string, 1)
	go func() {
		r, err := os.Open(p) // waits for the source's write
		if err != nil {
			written <- "<" + err.Error() + ">"
			return
		}
		b, _ := io.ReadAll(r)
		r.Close()
		written <- strings.TrimSpace(string(b))
		w, err := os.OpenFile(p, os.O_WRONLY, 0) // waits for the read-back
		if err != nil {
			return
		}
		w.WriteString(answer + "\n")
		w.Close()
	}()
	return written
}

// TestDeviceRateReadBack: a driver may round a written sampling frequency
// to one its clock divider supports (sysfs-bus-iio, sampling_frequency:
// the value read back is the one in use). Within 0.1 % of the configured
// rate the source runs at the rate read back; further off, Open refuses
// with the two rates named (README "Live inputs: a Linux IIO ADC",
// sample_rate_hz).
func TestDeviceRateReadBack(t *testing.T) {
	cases := []struct {
		name, answer string
		want         float64 // rate in use; 0 = Open must fail
		wantErr      string
	}{
		{"rounded within 0.1 %", "10245", 10245, ""},           // 0.049 % off: accepted
		{"rounded exactly", "10240.000", 10240, ""},            // same rate, another spelling
		{"divider too coarse", "10000", 0, "runs at 10000 Hz"}, // 2.3 % off
		{"just over 0.1 %", "10251", 0, "more than 0.1 % off"}, // 0.107 % off
	}
	for _, tc := range cases {
		t.Run(tc.name, func(t *testing.T) {
			sysfs, dev := fakeTree(t, func(p string) {
				if err := os.WriteFile(p, nil, 0o644); err != nil {
					t.Fatal(err)
				}
			})
			written := rateDevice(t, filepath.Join(sysfs, "iio:device0"), tc.answer)
			s, err := Open(Config{Device: "dc2-adc", Channels: []string{"voltage0"}, SampleRate: 10240, Sysfs: sysfs, Dev: dev})
			if got := <-written; got != "10240" {
				t.Errorf("wrote %q to sampling_frequency, want 10240", got)
			}
			if tc.want == 0 {
				if err == nil || !errors.Is(err, ErrDevice) || !strings.Contains(err.Error(), tc.wantErr) || !strings.Contains(err.Error(), "wrote 10240 Hz") {
					t.Fatalf("Open: %v, want ErrDevice naming both rates and %q", err, tc.wantErr)
				}
				return
			}
			if err != nil {
				t.Fatalf("Open: %v", err)
			}
			defer s.Close()
			if got := s.SampleRate(); got != tc.want {
				t.Errorf("SampleRate = %v, want the %v Hz read back", got, tc.want)
			}
		})
	}
}
