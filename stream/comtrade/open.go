package comtrade

import (
	"errors"
	"fmt"
	"io"
	"math"
	"os"
	"path/filepath"
	"strings"
	"time"
)

// uniformTol is the largest deviation of a time stamp from the uniform
// grid, as a fraction of the sample period, when nrates is 0 (DESIGN
// "Sources": 0.1 %); a stamp is never asked to be finer than its own
// resolution of one timemult unit.
const uniformTol = 1e-3

// ErrRate reports sampling the reader cannot turn into one rate.
var ErrRate = errors.New("comtrade: no single sampling rate")

// Recording is an opened COMTRADE recording.
type Recording struct {
	Config  *Config
	Data    *Reader
	Rate    float64   // Hz
	Start   time.Time // the first sample's time stamp
	DatPath string
	f       *os.File
}

// Close closes the .dat file.
func (r *Recording) Close() error { return r.f.Close() }

// DatPath returns the .dat file beside cfgPath: the same name with .dat
// (or .DAT) in place of the extension.
func DatPath(cfgPath string) (string, error) {
	base := strings.TrimSuffix(cfgPath, filepath.Ext(cfgPath))
	for _, ext := range []string{".dat", ".DAT", ".Dat"} {
		if _, err := os.Stat(base + ext); err == nil {
			return base + ext, nil
		}
	}
	return "", fmt.Errorf("%s: no .dat file beside it (%s.dat): %w", cfgPath, filepath.Base(base), os.ErrNotExist)
}

// Open reads cfgPath, maps the wanted channels (see Config.Map), works out
// the sampling rate and opens the .dat file beside it.
func Open(cfgPath string, names []string, idx []int) (*Recording, error) {
	b, err := os.ReadFile(cfgPath)
	if err != nil {
		return nil, fmt.Errorf("input: %w", err)
	}
	cfg, err := ParseConfig(cfgPath, b)
	if err != nil {
		return nil, err
	}
	cols, err := cfg.Map(names, idx)
	if err != nil {
		return nil, &Error{File: cfgPath, Line: 2, Offset: -1, Msg: strings.TrimPrefix(err.Error(), cfgPath+": "), err: ErrConfig}
	}
	dat, err := DatPath(cfgPath)
	if err != nil {
		return nil, err
	}
	rate, err := cfg.rate(dat, cols)
	if err != nil {
		return nil, err
	}
	f, err := os.Open(dat)
	if err != nil {
		return nil, fmt.Errorf("input: %w", err)
	}
	d, err := NewReader(cfg, dat, f, cols)
	if err != nil {
		f.Close()
		return nil, err
	}
	return &Recording{Config: cfg, Data: d, Rate: rate, Start: cfg.Start, DatPath: dat, f: f}, nil
}

// rate returns the one sampling rate: the .cfg's, or, when nrates is 0,
// the rate of uniform time stamps in the .dat (read once for that).
func (c *Config) rate(dat string, cols []int) (float64, error) {
	if c.Rates[0].Hz > 0 {
		for _, r := range c.Rates[1:] {
			if r.Hz != c.Rates[0].Hz {
				return 0, fmt.Errorf("%s: %w: %v Hz and %v Hz; resample the recording to one rate", c.Path, ErrRate, c.Rates[0].Hz, r.Hz)
			}
		}
		return c.Rates[0].Hz, nil
	}
	f, err := os.Open(dat)
	if err != nil {
		return 0, fmt.Errorf("input: %w", err)
	}
	defer f.Close()
	d, err := NewReader(c, dat, f, cols)
	if err != nil {
		return 0, err
	}
	return d.uniformRate()
}

// uniformRate reads every record and returns the rate of its time stamps
// when they lie on a uniform grid.
func (d *Reader) uniformRate() (float64, error) {
	var stamps []float64 // in timemult units; read once, for this check only
	d.stamps = &stamps
	dst := make([]float64, 256*len(d.cols))
	for {
		_, err := d.ReadFrames(dst)
		if err == io.EOF {
			break
		}
		if err != nil && len(stamps) == 0 {
			return 0, err
		}
		if err != nil {
			break // a cut file: the rate of what is there; replay warns later
		}
	}
	n := len(stamps)
	if n < 2 {
		return 0, fmt.Errorf("%s: %w: nrates is 0 and the .dat has %d time stamps", d.path, ErrRate, n)
	}
	span := (stamps[n-1] - stamps[0]) * d.cfg.TimeMult // µs
	if !(span > 0) {
		return 0, fmt.Errorf("%s: %w: nrates is 0 and the time stamps do not advance", d.path, ErrRate)
	}
	step := span / float64(n-1)
	tol := max(uniformTol*step, d.cfg.TimeMult)
	for i, s := range stamps {
		if dev := math.Abs((s-stamps[0])*d.cfg.TimeMult - float64(i)*step); dev > tol {
			return 0, fmt.Errorf("%s: %w: nrates is 0 and time stamp %d (%v) is %.3g µs off a uniform grid of %.6g µs (allowed %.3g µs)",
				d.path, ErrRate, i+1, s, dev, step, tol)
		}
	}
	return 1e6 / step, nil
}
