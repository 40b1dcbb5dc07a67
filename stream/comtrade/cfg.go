package comtrade

import (
	"bufio"
	"bytes"
	"fmt"
	"math"
	"strconv"
	"strings"
	"time"
)

// File types of the .dat file.
const (
	ASCII    = "ASCII"
	Binary   = "BINARY"
	Binary32 = "BINARY32"
	Float32  = "FLOAT32"
)

// Bounds that keep a hostile .cfg cheap (common practice, no source).
const (
	maxAnalog  = 4096
	maxDigital = 65536
	maxRates   = 256
)

// Channel is one analog channel of a .cfg file.
type Channel struct {
	Index     int    // An, 1-based as written
	ID        string // ch_id, trimmed
	Phase     string // ph
	Circuit   string // ccbm
	Unit      string // uu
	A, B      float64
	Skew      float64 // µs
	Min, Max  float64
	Primary   float64 // 0 when absent (1991 files)
	Secondary float64
	PS        byte // 'P', 'S', or 0 when absent
	Line      int
}

// Factor returns what a·x + b is multiplied by to give primary units:
// primary/secondary when the channel is recorded in secondary units.
func (c *Channel) Factor() float64 {
	if (c.PS == 'S' || c.PS == 's') && c.Primary > 0 && c.Secondary > 0 {
		return c.Primary / c.Secondary
	}
	return 1
}

// Rate is one sampling-rate segment: Hz up to and including sample EndSamp.
type Rate struct {
	Hz      float64
	EndSamp uint64
}

// Config is a parsed .cfg file.
type Config struct {
	Path     string
	Station  string
	Device   string
	Year     int // 1991 when absent, else 1999 or 2013
	Analog   []Channel
	Digital  int
	LineHz   float64
	Rates    []Rate // nrates entries; one entry with Hz 0 when nrates is 0 (time stamps give the rate)
	Start    time.Time
	Trigger  time.Time
	FileType string  // ASCII, BINARY, BINARY32 or FLOAT32
	TimeMult float64 // multiplier of the .dat time stamps (µs); 1 when absent
}

// Samples returns the sample count the file declares (the last endsamp).
func (c *Config) Samples() uint64 { return c.Rates[len(c.Rates)-1].EndSamp }

// cfgParser walks the lines of a .cfg file.
type cfgParser struct {
	path  string
	lines []string
	i     int
}

func (p *cfgParser) errf(line, field int, format string, a ...any) *Error {
	return &Error{File: p.path, Line: line, Field: field, Offset: -1, Msg: fmt.Sprintf(format, a...), err: ErrConfig}
}

// next returns the next line's fields and its 1-based number.
func (p *cfgParser) next(what string) ([]string, int, error) {
	if p.i >= len(p.lines) {
		return nil, 0, p.errf(len(p.lines)+1, 0, "the file ends where the %s line belongs", what)
	}
	p.i++
	f := strings.Split(p.lines[p.i-1], ",")
	for k := range f {
		f[k] = strings.TrimSpace(f[k])
	}
	return f, p.i, nil
}

func (p *cfgParser) num(f []string, line, k int, what string) (float64, error) {
	if k >= len(f) || f[k] == "" {
		return 0, p.errf(line, k+1, "%s is missing", what)
	}
	v, err := strconv.ParseFloat(f[k], 64)
	if err != nil || math.IsNaN(v) || math.IsInf(v, 0) {
		return 0, p.errf(line, k+1, "%s %q is not a number", what, f[k])
	}
	return v, nil
}

func (p *cfgParser) count(s string, line, k int, suffix string, limit int) (int, error) {
	t := strings.TrimSpace(s)
	if suffix != "" {
		if !strings.HasSuffix(strings.ToUpper(t), suffix) {
			return 0, p.errf(line, k+1, "%q: want a count followed by %s", s, suffix)
		}
		t = t[:len(t)-1]
	}
	n, err := strconv.Atoi(t)
	if err != nil || n < 0 || n > limit {
		return 0, p.errf(line, k+1, "%q: want a whole number from 0 to %d", s, limit)
	}
	return n, nil
}

// ParseConfig parses a .cfg file's bytes; path is used in messages. It
// accepts the 1999 and 2013 revisions (and 1991 files, which lack the
// revision year, the primary/secondary fields and timemult).
func ParseConfig(path string, data []byte) (*Config, error) {
	data = bytes.TrimPrefix(data, []byte("\xEF\xBB\xBF"))
	p := &cfgParser{path: path}
	sc := bufio.NewScanner(bytes.NewReader(data))
	sc.Buffer(make([]byte, 0, 4096), 1<<20)
	for sc.Scan() {
		p.lines = append(p.lines, strings.TrimRight(sc.Text(), "\r"))
	}
	if err := sc.Err(); err != nil {
		return nil, p.errf(len(p.lines)+1, 0, "%v", err)
	}
	c := &Config{Path: path, Year: 1991, TimeMult: 1}
	f, ln, err := p.next("station")
	if err != nil {
		return nil, err
	}
	c.Station = f[0]
	if len(f) > 1 {
		c.Device = f[1]
	}
	if len(f) > 2 && f[2] != "" {
		y, err := strconv.Atoi(f[2])
		if err != nil || (y != 1991 && y != 1999 && y != 2013) {
			return nil, p.errf(ln, 3, "revision year %q: allowed are 1991, 1999, 2013", f[2])
		}
		c.Year = y
	}
	if f, ln, err = p.next("channel count"); err != nil {
		return nil, err
	}
	if len(f) != 3 {
		return nil, p.errf(ln, 0, "channel counts: want TT,##A,##D, got %d fields", len(f))
	}
	total, err := p.count(f[0], ln, 0, "", maxAnalog+maxDigital)
	if err != nil {
		return nil, err
	}
	na, err := p.count(f[1], ln, 1, "A", maxAnalog)
	if err != nil {
		return nil, err
	}
	nd, err := p.count(f[2], ln, 2, "D", maxDigital)
	if err != nil {
		return nil, err
	}
	if na+nd != total {
		return nil, p.errf(ln, 1, "total %d is not %d analog + %d digital channels", total, na, nd)
	}
	c.Digital = nd
	for k := range na {
		ch, err := p.analog(k + 1)
		if err != nil {
			return nil, err
		}
		c.Analog = append(c.Analog, ch)
	}
	for k := range nd {
		if f, ln, err = p.next("digital channel"); err != nil {
			return nil, err
		}
		if n, err := strconv.Atoi(f[0]); err != nil || n != k+1 {
			return nil, p.errf(ln, 1, "digital channel %d: index %q, want %d", k+1, f[0], k+1)
		}
	}
	if f, ln, err = p.next("line frequency"); err != nil {
		return nil, err
	}
	if c.LineHz, err = p.num(f, ln, 0, "line frequency"); err != nil {
		return nil, err
	}
	if err := p.rates(c); err != nil {
		return nil, err
	}
	for _, dst := range []*time.Time{&c.Start, &c.Trigger} {
		if f, ln, err = p.next("time stamp"); err != nil {
			return nil, err
		}
		t, err := p.stamp(f, ln)
		if err != nil {
			return nil, err
		}
		*dst = t
	}
	if f, ln, err = p.next("file type"); err != nil {
		return nil, err
	}
	switch ft := strings.ToUpper(f[0]); ft {
	case ASCII, Binary, Binary32, Float32:
		if (ft == Binary32 || ft == Float32) && c.Year < 2013 {
			return nil, p.errf(ln, 1, "file type %s needs revision 2013 (the file says %d)", ft, c.Year)
		}
		c.FileType = ft
	default:
		return nil, p.errf(ln, 1, "file type %q: allowed are ASCII, BINARY, BINARY32, FLOAT32", f[0])
	}
	if p.i < len(p.lines) && strings.TrimSpace(p.lines[p.i]) != "" {
		f, ln, _ = p.next("timemult")
		if c.TimeMult, err = p.num(f, ln, 0, "timemult"); err != nil {
			return nil, err
		}
		if !(c.TimeMult > 0) {
			return nil, p.errf(ln, 1, "timemult %v: must be more than 0", c.TimeMult)
		}
	}
	// 2013 adds time_code,local_code and tmq_code,leapsec: informational.
	return c, nil
}

// analog parses analog channel line k (1-based).
func (p *cfgParser) analog(k int) (Channel, error) {
	f, ln, err := p.next("analog channel")
	if err != nil {
		return Channel{}, err
	}
	if len(f) != 13 && len(f) != 10 {
		return Channel{}, p.errf(ln, 0, "analog channel %d: %d fields, want 13 (An,ch_id,ph,ccbm,uu,a,b,skew,min,max,primary,secondary,PS; 10 in 1991 files)", k, len(f))
	}
	ch := Channel{ID: f[1], Phase: f[2], Circuit: f[3], Unit: f[4], Line: ln}
	if ch.Index, err = strconv.Atoi(f[0]); err != nil || ch.Index != k {
		return Channel{}, p.errf(ln, 1, "analog channel %d: index %q, want %d", k, f[0], k)
	}
	for i, dst := range []*float64{&ch.A, &ch.B, &ch.Skew, &ch.Min, &ch.Max} {
		name := [...]string{"a", "b", "skew", "min", "max"}[i]
		if f[5+i] == "" && i == 2 {
			continue // skew may be empty
		}
		if *dst, err = p.num(f, ln, 5+i, name); err != nil {
			return Channel{}, err
		}
	}
	if len(f) == 13 {
		if ch.Primary, err = p.num(f, ln, 10, "primary"); err != nil {
			return Channel{}, err
		}
		if ch.Secondary, err = p.num(f, ln, 11, "secondary"); err != nil {
			return Channel{}, err
		}
		switch ps := strings.ToUpper(f[12]); ps {
		case "P", "S":
			ch.PS = ps[0]
		default:
			return Channel{}, p.errf(ln, 13, "PS %q: allowed are P (primary) and S (secondary)", f[12])
		}
		if ch.PS == 'S' && !(ch.Primary > 0 && ch.Secondary > 0) {
			return Channel{}, p.errf(ln, 11, "channel %q is in secondary units but primary %v / secondary %v is not a ratio", ch.ID, ch.Primary, ch.Secondary)
		}
	}
	return ch, nil
}

// rates parses nrates and its samp,endsamp lines.
func (p *cfgParser) rates(c *Config) error {
	f, ln, err := p.next("nrates")
	if err != nil {
		return err
	}
	n, err := p.count(f[0], ln, 0, "", maxRates)
	if err != nil {
		return err
	}
	for k := range max(n, 1) {
		if f, ln, err = p.next("samp,endsamp"); err != nil {
			return err
		}
		hz, err := p.num(f, ln, 0, "samp")
		if err != nil {
			return err
		}
		end, err := p.num(f, ln, 1, "endsamp")
		if err != nil {
			return err
		}
		switch {
		case n > 0 && !(hz > 0):
			return p.errf(ln, 1, "sampling rate %v Hz: must be more than 0", hz)
		case end < 1 || end != math.Trunc(end) || end > 1<<53:
			return p.errf(ln, 2, "endsamp %v: want a whole sample number of at least 1", end)
		case k > 0 && uint64(end) <= c.Rates[k-1].EndSamp:
			return p.errf(ln, 2, "endsamp %v does not follow %d", end, c.Rates[k-1].EndSamp)
		}
		if n == 0 {
			hz = 0
		}
		c.Rates = append(c.Rates, Rate{Hz: hz, EndSamp: uint64(end)})
	}
	return nil
}

// stamp parses dd/mm/yyyy,hh:mm:ss.ssssss (as UTC: COMTRADE time stamps
// carry no zone; 2013's time_code is informational here).
func (p *cfgParser) stamp(f []string, ln int) (time.Time, error) {
	if len(f) != 2 {
		return time.Time{}, p.errf(ln, 0, "time stamp: want dd/mm/yyyy,hh:mm:ss.ssssss, got %d fields", len(f))
	}
	d := strings.Split(f[0], "/")
	tm := strings.Split(f[1], ":")
	if len(d) != 3 || len(tm) != 3 || len(d[2]) != 4 {
		return time.Time{}, p.errf(ln, 1, "time stamp %q: want dd/mm/yyyy,hh:mm:ss.ssssss", strings.Join(f, ","))
	}
	var v [5]int
	for i, s := range []string{d[0], d[1], d[2], tm[0], tm[1]} {
		n, err := strconv.Atoi(s)
		if err != nil || n < 0 {
			return time.Time{}, p.errf(ln, 1, "time stamp %q: %q is not a whole number", strings.Join(f, ","), s)
		}
		v[i] = n
	}
	secs := tm[2]
	whole, frac, _ := strings.Cut(secs, ".")
	sec, err := strconv.Atoi(whole)
	if err != nil || sec < 0 || sec > 60 || len(frac) > 9 {
		return time.Time{}, p.errf(ln, 2, "seconds %q: want ss.ssssss (up to 9 decimals)", secs)
	}
	ns := 0
	if frac != "" {
		n, err := strconv.Atoi(frac)
		if err != nil || n < 0 {
			return time.Time{}, p.errf(ln, 2, "seconds %q: want ss.ssssss", secs)
		}
		ns = n * int(math.Pow10(9-len(frac)))
	}
	day, mon, yr, hh, mm := v[0], v[1], v[2], v[3], v[4]
	if mon < 1 || mon > 12 || day < 1 || day > 31 || hh > 23 || mm > 59 {
		return time.Time{}, p.errf(ln, 1, "time stamp %q is not a date and time (dd/mm/yyyy)", strings.Join(f, ","))
	}
	t := time.Date(yr, time.Month(mon), day, hh, mm, sec, ns, time.UTC)
	if t.Day() != day {
		return time.Time{}, p.errf(ln, 1, "time stamp %q: no such day", strings.Join(f, ","))
	}
	return t, nil
}

// Map returns, for each wanted channel, the 0-based index of its analog
// channel: idx[i] > 0 names the 1-based analog index, else names[i]
// matches a ch_id (case-insensitive, trimmed).
func (c *Config) Map(names []string, idx []int) ([]int, error) {
	out := make([]int, len(names))
	for i, n := range names {
		if i < len(idx) && idx[i] > 0 {
			if idx[i] > len(c.Analog) {
				return nil, fmt.Errorf("%s: channel %q: comtrade: %d, but the file has %d analog channels", c.Path, n, idx[i], len(c.Analog))
			}
			out[i] = idx[i] - 1
			continue
		}
		out[i] = -1
		for k := range c.Analog {
			if strings.EqualFold(strings.TrimSpace(c.Analog[k].ID), strings.TrimSpace(n)) {
				if out[i] >= 0 {
					return nil, fmt.Errorf("%s: channel %q matches analog channels %d and %d; name one with comtrade: N", c.Path, n, out[i]+1, k+1)
				}
				out[i] = k
			}
		}
		if out[i] < 0 {
			ids := make([]string, len(c.Analog))
			for k := range c.Analog {
				ids[k] = c.Analog[k].ID
			}
			return nil, fmt.Errorf("%s: channel %q is not an analog channel id (the file has: %s); rename it or set comtrade: N", c.Path, n, strings.Join(ids, ", "))
		}
	}
	return out, nil
}
