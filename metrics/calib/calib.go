package calib

import (
	"errors"
	"fmt"
	"math"
	"strconv"
	"strings"

	"github.com/gridloupe/gridloupe/metrics"
)

// ErrReference reports a reference string or value that cannot be used.
var ErrReference = errors.New("calib: bad reference")

// Reference is one reading of the reference instrument.
type Reference struct {
	Key   string  // a channel name (its RMS), pf_<phase>, dpf_<phase> or dpf_total
	Value float64 // V or A for a channel; a power factor in (0, 1]
}

// ParseReference parses "va=231.2,ia=118.5,pf_a=0.93": comma-separated
// key=value pairs, no key twice.
func ParseReference(s string) ([]Reference, error) {
	var out []Reference
	seen := map[string]bool{}
	for _, part := range strings.Split(s, ",") {
		part = strings.TrimSpace(part)
		if part == "" {
			continue
		}
		k, v, ok := strings.Cut(part, "=")
		k = strings.TrimSpace(k)
		if !ok || k == "" {
			return nil, fmt.Errorf("%q: want key=value, such as va=231.2 or pf_a=0.93: %w", part, ErrReference)
		}
		x, err := strconv.ParseFloat(strings.TrimSpace(v), 64)
		if err != nil || math.IsNaN(x) || math.IsInf(x, 0) {
			return nil, fmt.Errorf("%q: %q is not a number: %w", part, v, ErrReference)
		}
		if seen[k] {
			return nil, fmt.Errorf("%q given twice: %w", k, ErrReference)
		}
		seen[k] = true
		out = append(out, Reference{Key: k, Value: x})
	}
	if len(out) == 0 {
		return nil, fmt.Errorf("no readings: give at least one, such as va=231.2: %w", ErrReference)
	}
	return out, nil
}

// Correction is what to change on one channel.
type Correction struct {
	Channel  int     // index in Setup.Channels
	Factor   float64 // multiply scale and offset by this (1 = unchanged)
	DelayS   float64 // add to the channel's delay, s (0 = unchanged)
	Measured float64 // what the snapshot read (RMS, or the power factor)
	Ref      float64 // what the reference read
	Key      string  // the reference key
	Angle    bool    // an angle (delay) correction, from a power factor
}

// maxShiftDeg bounds an angle correction: a CT or sensor phase error is
// a degree or two, rarely more than 10°; more is a wiring mistake (run
// gridloupe wiring).
const maxShiftDeg = 20

// maxFactorDev bounds a scale correction to ±30 %; more is a wrong ratio
// or a wrong channel, not a calibration.
const maxFactorDev = 0.30

// Solve computes the corrections for record r (an aggregate made with s)
// against refs. freqHz is the fundamental frequency for delays (the
// record's own when finite). Errors name the reference key and what is
// allowed.
func Solve(s *metrics.Setup, r *metrics.Record, refs []Reference, freqHz float64) ([]Correction, error) {
	if f := r.FreqHz; f > 0 && !metrics.IsNull(f) {
		freqHz = f
	}
	var out []Correction
	angled := map[int]string{} // channel → the angle reference that moved it
	for _, ref := range refs {
		c, err := solveOne(s, r, ref, freqHz)
		if err != nil {
			return nil, fmt.Errorf("%s=%g: %w", ref.Key, ref.Value, err)
		}
		for _, x := range c {
			if !x.Angle {
				continue
			}
			if k, dup := angled[x.Channel]; dup {
				return nil, fmt.Errorf("%s and %s both correct the angle of %s; give one of them: %w", k, ref.Key, s.Channels[x.Channel].Name, ErrReference)
			}
			angled[x.Channel] = ref.Key
		}
		out = append(out, c...)
	}
	return out, nil
}

func solveOne(s *metrics.Setup, r *metrics.Record, ref Reference, f float64) ([]Correction, error) {
	for ci, ch := range s.Channels {
		if ch.Name != ref.Key {
			continue
		}
		m := r.Channels[ci].RMS
		if !(ref.Value > 0) {
			return nil, fmt.Errorf("an RMS reading must be more than 0: %w", ErrReference)
		}
		if metrics.IsNull(m) || !(m > 0) {
			return nil, fmt.Errorf("channel %s reads nothing; check its wiring first: %w", ch.Name, ErrReference)
		}
		k := ref.Value / m
		if math.Abs(k-1) > maxFactorDev {
			return nil, fmt.Errorf("channel %s reads %.4g, the reference %.4g: a %.0f %% correction is a wrong ratio or channel, not a calibration (allowed ±30 %%): %w",
				ch.Name, m, ref.Value, 100*(k-1), ErrReference)
		}
		return []Correction{{Channel: ci, Factor: k, Measured: m, Ref: ref.Value, Key: ref.Key}}, nil
	}
	kind, phase, ok := strings.Cut(ref.Key, "_")
	if !ok || (kind != "pf" && kind != "dpf") {
		return nil, fmt.Errorf("unknown key: use a channel name (its RMS), pf_<phase>, dpf_<phase> or dpf_total: %w", ErrReference)
	}
	if !(ref.Value > 0 && ref.Value <= 1) {
		return nil, fmt.Errorf("a power factor reading is more than 0 and at most 1 (the lead or lag sense is taken from the measurement): %w", ErrReference)
	}
	if !(f > 0) {
		return nil, fmt.Errorf("no frequency to turn an angle into a delay: %w", ErrReference)
	}
	var thM, thR float64 // measured and reference displacement, rad, + lagging
	var chans []int
	var meas float64
	switch {
	case phase == "total":
		if kind != "dpf" {
			return nil, fmt.Errorf("the total takes dpf_total (P1+/S1+), not pf_total: %w", ErrReference)
		}
		t := r.Total
		if metrics.IsNull(t.P1Pos) || metrics.IsNull(t.Q1Pos) {
			return nil, fmt.Errorf("no positive-sequence power (wye with three phase pairs, or delta with two or three CTs): %w", ErrReference)
		}
		thM = math.Atan2(t.Q1Pos, t.P1Pos)
		thR = math.Copysign(math.Acos(ref.Value), thM)
		meas = t.DPF
		for ci, ch := range s.Channels {
			if ch.Kind == metrics.Current {
				chans = append(chans, ci)
			}
		}
	default:
		k := -1
		for i, p := range s.Pairs {
			if len(phase) == 1 && p.Phase == phase[0] {
				k = i
			}
		}
		if k < 0 {
			return nil, fmt.Errorf("phase %q has no voltage and current pair (delta: use dpf_total): %w", phase, ErrReference)
		}
		pv := r.Phases[k]
		if metrics.IsNull(pv.P1) || metrics.IsNull(pv.Q1) || !(pv.S1 > 0) {
			return nil, fmt.Errorf("phase %s has no fundamental power to judge: %w", phase, ErrReference)
		}
		thM = math.Atan2(pv.Q1, pv.P1)
		if kind == "dpf" {
			thR = math.Copysign(math.Acos(ref.Value), thM)
			meas = pv.DPF
		} else {
			// PF = (P1 + PH)/S with PH = P − P1 the harmonic active power;
			// turning the current moves P1 = S1·cos θ and (to first order)
			// nothing else, so cos θ = (PF·S − PH)/S1.
			c := (ref.Value*pv.S - (pv.P - pv.P1)) / pv.S1
			if !(c > -1 && c <= 1) {
				return nil, fmt.Errorf("phase %s: no current angle gives PF %g with the measured distortion (PF can reach at most %.3f): %w",
					phase, ref.Value, (pv.S1+pv.P-pv.P1)/pv.S, ErrReference)
			}
			thR = math.Copysign(math.Acos(c), thM)
			meas = pv.PF
		}
		chans = []int{pv2I(s, k)}
	}
	d := thM - thR // the current lags this much too far: read it earlier (a negative delay)
	if math.Abs(d)*180/math.Pi > maxShiftDeg {
		return nil, fmt.Errorf("a %.1f° correction is a wiring mistake, not a sensor's phase error (allowed ±%d°); run gridloupe wiring: %w",
			d*180/math.Pi, maxShiftDeg, ErrReference)
	}
	tau := -d / (2 * math.Pi * f)
	out := make([]Correction, len(chans))
	for i, ci := range chans {
		out[i] = Correction{Channel: ci, Factor: 1, DelayS: tau, Measured: meas, Ref: ref.Value, Key: ref.Key, Angle: true}
	}
	return out, nil
}

func pv2I(s *metrics.Setup, k int) int { return s.Pairs[k].I }
