package iio

import (
	"context"
	"errors"
	"fmt"
	"io"
	"log/slog"
	"math"
	"os"
	"path/filepath"
	"slices"
	"strconv"
	"strings"
	"sync"
	"time"

	"github.com/gridloupe/gridloupe/stream"
)

// Config configures a device source. Zero values are documented per field.
type Config struct {
	Device   string   // directory name (iio:device0) or the name attribute; required
	Channels []string // scan elements in output order: "voltage0" means scan_elements/in_voltage0_*; required
	Sysfs    string   // root of the devices; "" = /sys/bus/iio/devices
	Dev      string   // root of the character devices; "" = /dev
	// BufferLength is written to buffer/length (scans); 0 leaves it as is.
	BufferLength int
	// SampleRate, when > 0, is written to the sampling frequency attribute
	// and read back; a difference over 0.1 % is an error. 0 reads it.
	SampleRate float64
	Logger     *slog.Logger     // nil discards
	Now        func() time.Time // wall clock when no realtime timestamp element; nil = time.Now
}

// rateTol is the largest relative difference between a written and a
// read-back sampling frequency (DESIGN "Sources": 0.1 %).
const rateTol = 1e-3

// gapSteps is the timestamp step, in sample periods, above which samples
// are missing (DESIGN "Sources": 1.5 periods).
const gapSteps = 1.5

// maxGapSteps is the longest hole, in seconds of samples, taken as lost
// data; a longer forward step of the timestamp is a step of its clock and
// is marked as a one-sample gap (a backward step is ignored).
const maxGapSteps = 3600

// Source reads one IIO device's buffer. Open enables it; Close disables it
// and restores the _en files, and must be called on every way out (it is
// safe to call twice and from another goroutine while ReadFrames blocks:
// closing the device file releases the read). Not safe for concurrent use
// otherwise.
type Source struct {
	cfg     Config
	log     *slog.Logger
	dir     string // sysfs directory of the device
	bufDir  string // buffer or buffer0
	els     []Element
	out     []int // per output channel: index into els
	ts      int   // index into els of the timestamp element, −1 when none
	scale   []float64
	offset  []float64
	scan    int // bytes per scan
	fs      float64
	realts  bool // the timestamp clock is realtime: it gives wall time
	saved   map[string]string
	oldLen  string
	f       *os.File
	buf     []byte
	have    int
	lastTS  int64
	hasTS   bool
	first   time.Time
	gap     stream.Gap
	pending uint64
	steps   uint64 // timestamp clock steps seen
	mu      sync.Mutex
	closed  bool
	stopped bool // the device file was closed (by Stop or Close)
	err     error
}

// Open finds the device, checks the channels, sets the rate and buffer
// length, enables the channels (and the timestamp element, when the device
// has one) and the buffer, and opens the character device. On any failure
// it undoes what it changed.
func Open(cfg Config) (s *Source, err error) {
	if cfg.Sysfs == "" {
		cfg.Sysfs = "/sys/bus/iio/devices"
	}
	if cfg.Dev == "" {
		cfg.Dev = "/dev"
	}
	if cfg.Now == nil {
		cfg.Now = time.Now
	}
	if len(cfg.Channels) == 0 {
		return nil, fmt.Errorf("%w: no channels", ErrDevice)
	}
	s = &Source{cfg: cfg, log: cfg.Logger, ts: -1, saved: map[string]string{}}
	if s.log == nil {
		s.log = slog.New(slog.DiscardHandler)
	}
	if s.dir, err = find(cfg.Sysfs, cfg.Device); err != nil {
		return nil, err
	}
	defer func() {
		if err != nil {
			err = errors.Join(err, s.Close())
			s = nil
		}
	}()
	if err = s.elements(); err != nil {
		return s, err
	}
	if err = s.rate(); err != nil {
		return s, err
	}
	if err = s.enable(); err != nil {
		return s, err
	}
	return s, nil
}

// find returns the sysfs directory of the device named dev.
func find(root, dev string) (string, error) {
	if dev == "" {
		return "", fmt.Errorf("%w: no device named", ErrDevice)
	}
	if st, err := os.Stat(filepath.Join(root, dev)); err == nil && st.IsDir() && !strings.ContainsAny(dev, `/\`) {
		return filepath.Join(root, dev), nil
	}
	entries, err := os.ReadDir(root)
	if err != nil {
		return "", fmt.Errorf("%w: %s: %w", ErrDevice, root, err)
	}
	var seen []string
	for _, e := range entries {
		b, err := os.ReadFile(filepath.Join(root, e.Name(), "name"))
		if err != nil {
			continue
		}
		n := strings.TrimSpace(string(b))
		if n == dev {
			return filepath.Join(root, e.Name()), nil
		}
		seen = append(seen, e.Name()+" ("+n+")")
	}
	return "", fmt.Errorf("%w: no device %q under %s (found: %s)", ErrDevice, dev, root, strings.Join(seen, ", "))
}

// attr reads an attribute file, trimmed.
func (s *Source) attr(rel string) (string, error) {
	b, err := os.ReadFile(filepath.Join(s.dir, rel))
	if err != nil {
		return "", err
	}
	return strings.TrimSpace(string(b)), nil
}

// number reads a numeric attribute, or returns def when none of the
// candidate files exists.
func (s *Source) number(def float64, rels ...string) (float64, string, error) {
	for _, rel := range rels {
		v, err := s.attr(rel)
		if errors.Is(err, os.ErrNotExist) {
			continue
		}
		if err != nil {
			return 0, rel, fmt.Errorf("%w: %s: %w", ErrDevice, filepath.Join(s.dir, rel), err)
		}
		x, err := strconv.ParseFloat(v, 64)
		if err != nil || math.IsNaN(x) || math.IsInf(x, 0) {
			return 0, rel, fmt.Errorf("%w: %s: %q is not a number", ErrDevice, filepath.Join(s.dir, rel), v)
		}
		return x, rel, nil
	}
	return def, "", nil
}

// typePrefix is the shared-attribute stem of a scan element: in_voltage0 →
// in_voltage, in_voltage0-voltage1 → in_voltage-voltage.
func typePrefix(el string) string {
	var b strings.Builder
	for _, r := range el {
		if r < '0' || r > '9' {
			b.WriteRune(r)
		}
	}
	return b.String()
}

// elements reads the scan elements of the configured channels and the
// timestamp, their scale and offset, and lays out the scan.
func (s *Source) elements() error {
	want := make([]string, 0, len(s.cfg.Channels)+1)
	for _, c := range s.cfg.Channels {
		el := c
		if !strings.HasPrefix(el, "in_") {
			el = "in_" + el
		}
		if slices.Contains(want, el) {
			return fmt.Errorf("%w: channel %q is configured twice", ErrDevice, c)
		}
		want = append(want, el)
	}
	if _, err := os.Stat(filepath.Join(s.dir, "scan_elements", "in_timestamp_en")); err == nil {
		want = append(want, "in_timestamp")
	}
	for _, el := range want {
		idx, err := s.attr("scan_elements/" + el + "_index")
		if err != nil {
			return fmt.Errorf("%w: %s has no scan element %s (%v)", ErrDevice, s.dir, el, err)
		}
		i, err := strconv.Atoi(idx)
		if err != nil || i < 0 {
			return fmt.Errorf("%w: %s/scan_elements/%s_index: %q is not an index", ErrDevice, s.dir, el, idx)
		}
		ts, err := s.attr("scan_elements/" + el + "_type")
		if err != nil {
			return fmt.Errorf("%w: %s: %v", ErrDevice, el, err)
		}
		t, err := ParseType(ts)
		if err != nil {
			return fmt.Errorf("%w: %s/scan_elements/%s_type: %v", ErrDevice, s.dir, el, err)
		}
		if t.Repeat > 1 && el != "in_timestamp" {
			return fmt.Errorf("%w: %s: a repeated element (%s) is not a single channel; name another", ErrDevice, el, t)
		}
		s.els = append(s.els, Element{Name: el, Index: i, Type: t})
	}
	// every other enabled element takes room in the scan: they are
	// disabled while we run (and restored by Close)
	sort := slices.Clone(s.els)
	slices.SortFunc(sort, func(a, b Element) int { return a.Index - b.Index })
	for i := 1; i < len(sort); i++ {
		if sort[i].Index == sort[i-1].Index {
			return fmt.Errorf("%w: %s and %s share scan index %d", ErrDevice, sort[i-1].Name, sort[i].Name, sort[i].Index)
		}
	}
	s.scan = Layout(sort)
	names := make([]string, len(s.els))
	for i, e := range s.els {
		names[i] = e.Name
	}
	s.els = sort
	s.out = make([]int, len(s.cfg.Channels))
	s.scale = make([]float64, len(s.cfg.Channels))
	s.offset = make([]float64, len(s.cfg.Channels))
	for k := range s.cfg.Channels {
		j := slices.IndexFunc(s.els, func(e Element) bool { return e.Name == names[k] })
		s.out[k] = j
		p := typePrefix(names[k])
		var err error
		if s.scale[k], _, err = s.number(1, names[k]+"_scale", p+"_scale"); err != nil {
			return err
		}
		if s.offset[k], _, err = s.number(0, names[k]+"_offset", p+"_offset"); err != nil {
			return err
		}
	}
	s.ts = slices.IndexFunc(s.els, func(e Element) bool { return e.Name == "in_timestamp" })
	if s.ts >= 0 {
		clk, err := s.attr("current_timestamp_clock")
		s.realts = err != nil || clk == "realtime"
	}
	return nil
}

// rate reads (and when configured first writes) the sampling frequency.
func (s *Source) rate() error {
	files := []string{"sampling_frequency", typePrefix(s.els[s.out[0]].Name) + "_sampling_frequency"}
	if s.cfg.SampleRate > 0 {
		rel := ""
		for _, f := range files {
			if _, err := os.Stat(filepath.Join(s.dir, f)); err == nil {
				rel = f
				break
			}
		}
		if rel == "" {
			return fmt.Errorf("%w: %s has no sampling_frequency attribute to set %v Hz", ErrDevice, s.dir, s.cfg.SampleRate)
		}
		if err := s.write(rel, strconv.FormatFloat(s.cfg.SampleRate, 'f', -1, 64)); err != nil {
			return err
		}
	}
	fs, rel, err := s.number(0, files...)
	if err != nil {
		return err
	}
	switch {
	case rel == "":
		return fmt.Errorf("%w: %s has no sampling_frequency attribute", ErrDevice, s.dir)
	case !(fs > 0):
		return fmt.Errorf("%w: %s/%s reads %v Hz", ErrDevice, s.dir, rel, fs)
	case s.cfg.SampleRate > 0 && math.Abs(fs-s.cfg.SampleRate) > rateTol*s.cfg.SampleRate:
		return fmt.Errorf("%w: %s/%s: wrote %v Hz, the device runs at %v Hz (more than 0.1 %% off); choose a rate it supports",
			ErrDevice, s.dir, rel, s.cfg.SampleRate, fs)
	}
	s.fs = fs
	return nil
}

// ClockSteps returns how many timestamp jumps over an hour were taken as
// clock steps rather than lost data.
func (s *Source) ClockSteps() uint64 { return s.steps }

// SampleRate returns the device's sampling frequency in Hz.
func (s *Source) SampleRate() float64 { return s.fs }

// ScanBytes returns the size of one scan.
func (s *Source) ScanBytes() int { return s.scan }

// write writes an attribute.
func (s *Source) write(rel, v string) error {
	if err := os.WriteFile(filepath.Join(s.dir, rel), []byte(v+"\n"), 0); err != nil {
		return fmt.Errorf("%w: write %s: %w", ErrDevice, filepath.Join(s.dir, rel), err)
	}
	return nil
}

// enable disables the buffer, sets every scan element's _en (ours on, the
// rest off, the old values saved), the length, then enables the buffer
// and opens the device.
func (s *Source) enable() error {
	for _, d := range []string{"buffer", "buffer0"} {
		if _, err := os.Stat(filepath.Join(s.dir, d, "enable")); err == nil {
			s.bufDir = d
			break
		}
	}
	if s.bufDir == "" {
		return fmt.Errorf("%w: %s has neither buffer/enable nor buffer0/enable (no buffered capture)", ErrDevice, s.dir)
	}
	if err := s.write(s.bufDir+"/enable", "0"); err != nil {
		return err
	}
	ens, err := filepath.Glob(filepath.Join(s.dir, "scan_elements", "*_en"))
	if err != nil {
		return fmt.Errorf("%w: %w", ErrDevice, err)
	}
	for _, p := range ens {
		rel := "scan_elements/" + filepath.Base(p)
		old, err := s.attr(rel)
		if err != nil {
			return fmt.Errorf("%w: %w", ErrDevice, err)
		}
		el := strings.TrimSuffix(filepath.Base(p), "_en")
		want := "0"
		if slices.ContainsFunc(s.els, func(e Element) bool { return e.Name == el }) {
			want = "1"
		}
		if old == want {
			continue
		}
		s.saved[rel] = old
		if err := s.write(rel, want); err != nil {
			return err
		}
	}
	if s.cfg.BufferLength > 0 {
		s.oldLen, _ = s.attr(s.bufDir + "/length")
		if err := s.write(s.bufDir+"/length", strconv.Itoa(s.cfg.BufferLength)); err != nil {
			return err
		}
	}
	if err := s.write(s.bufDir+"/enable", "1"); err != nil {
		return err
	}
	f, err := os.Open(filepath.Join(s.cfg.Dev, filepath.Base(s.dir)))
	if err != nil {
		return fmt.Errorf("%w: %w", ErrDevice, err)
	}
	s.mu.Lock()
	s.f = f
	s.mu.Unlock()
	s.buf = make([]byte, max(1, 16<<10/s.scan)*s.scan)
	return nil
}

// Close disables the buffer, restores the buffer length and every _en
// file Open changed, and closes the device. It can be called twice.
func (s *Source) Close() error {
	s.mu.Lock()
	defer s.mu.Unlock()
	if s.closed {
		return nil
	}
	s.closed = true
	var errs []error
	if s.f != nil && !s.stopped {
		s.stopped = true
		errs = append(errs, s.f.Close())
	}
	if s.bufDir != "" {
		errs = append(errs, s.write(s.bufDir+"/enable", "0"))
		if s.oldLen != "" {
			errs = append(errs, s.write(s.bufDir+"/length", s.oldLen))
		}
	}
	for rel, old := range s.saved {
		errs = append(errs, s.write(rel, old))
	}
	return errors.Join(errs...)
}

// Stop releases a blocked ReadFrames when ctx ends (a real device blocks
// until data comes); the returned function stops the watcher.
func (s *Source) Stop(ctx context.Context) (release func()) {
	done := make(chan struct{})
	var wg sync.WaitGroup
	wg.Add(1)
	go func() {
		defer wg.Done()
		select {
		case <-ctx.Done():
			s.mu.Lock()
			if s.f != nil && !s.stopped {
				s.stopped = true
				_ = s.f.Close()
			}
			s.mu.Unlock()
		case <-done:
		}
	}()
	return func() { close(done); wg.Wait() }
}

// ReadFrames fills dst with up to len(dst)/channels frames of volts (or
// amperes) at the ADC input; after Stop's context ends it returns io.EOF: (raw + offset) · scale / 1000. A step of the
// timestamp over 1.5 sample periods is returned as a *stream.Gap of the
// missing samples. A device that stops delivering or disappears returns
// an error wrapping ErrVanished.
func (s *Source) ReadFrames(dst []float64) (int, error) {
	nch := len(s.out)
	room := len(dst) / nch
	if room == 0 {
		if len(dst) == 0 {
			return 0, nil
		}
		return 0, io.ErrShortBuffer
	}
	if s.pending > 0 {
		s.gap.Missing, s.pending = s.pending, 0
		return 0, &s.gap
	}
	if err := s.fill(); err != nil {
		return 0, err
	}
	k := 0
	for ; k < room && (k+1)*s.scan <= s.have; k++ {
		sc := s.buf[k*s.scan : (k+1)*s.scan]
		if s.ts >= 0 {
			t := s.els[s.ts].Type.Value(sc[s.els[s.ts].Offset:])
			steps := float64(t-s.lastTS) * s.fs / 1e9
			hole := s.hasTS && steps > gapSteps
			s.lastTS, s.hasTS = t, true
			if hole {
				// the scans before the hole go first; this scan is then
				// read again, with its own time as the reference
				s.pending = uint64(math.Round(steps)) - 1
				if steps > maxGapSteps*s.fs {
					s.pending = 1 // a clock step, not an hour of lost data: mark the hole only
					s.steps++
				}
				if k == 0 {
					s.gap.Missing, s.pending = s.pending, 0
					return 0, &s.gap
				}
				break
			}
		}
		s.decode(dst[k*nch:], sc)
	}
	s.consume(k)
	return k, nil
}

// fill reads until at least one whole scan is buffered.
func (s *Source) fill() error {
	for s.have < s.scan {
		if s.err != nil {
			return s.err
		}
		n, err := s.f.Read(s.buf[s.have:])
		s.have += n
		if err != nil {
			s.err = s.vanished(err)
		}
	}
	if s.first.IsZero() {
		s.first = s.cfg.Now().UTC()
		if s.ts >= 0 && s.realts {
			s.first = time.Unix(0, s.els[s.ts].Type.Value(s.buf[s.els[s.ts].Offset:])).UTC()
		}
	}
	return nil
}

// First waits for the first scan and returns its wall time: the timestamp
// element when its clock is realtime, else the system clock when it came.
// The scan stays buffered for ReadFrames.
func (s *Source) First() (time.Time, error) {
	if err := s.fill(); err != nil {
		return time.Time{}, err
	}
	return s.first, nil
}

func (s *Source) consume(k int) { s.have = copy(s.buf, s.buf[k*s.scan:s.have]) }

// decode converts one scan to the output channels: (raw + offset) · scale
// is in millivolts (milliamperes), /1000 gives volts (amperes).
func (s *Source) decode(dst []float64, sc []byte) {
	for c, j := range s.out {
		e := &s.els[j]
		dst[c] = (float64(e.Type.Value(sc[e.Offset:])) + s.offset[c]) * s.scale[c] / 1000
	}
}

// vanished explains a failed or ended read.
func (s *Source) vanished(err error) error {
	s.mu.Lock()
	stopped := s.stopped
	s.mu.Unlock()
	if stopped && errors.Is(err, os.ErrClosed) {
		return io.EOF // released by Stop or Close: the run is ending
	}
	if _, serr := os.Stat(s.dir); serr != nil {
		return fmt.Errorf("%w: %s is gone: %w", ErrVanished, s.dir, err)
	}
	if errors.Is(err, io.EOF) {
		return fmt.Errorf("%w: %s stopped delivering (end of file)", ErrVanished, filepath.Join(s.cfg.Dev, filepath.Base(s.dir)))
	}
	return fmt.Errorf("%w: %s: %w", ErrVanished, filepath.Join(s.cfg.Dev, filepath.Base(s.dir)), err)
}
