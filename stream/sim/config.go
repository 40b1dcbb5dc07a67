package sim

import (
	"fmt"
	"math"
	"time"

	"github.com/gridloupe/gridloupe/metrics"
)

// Defaults used when a Config field is zero.
const (
	DefaultSampleRate = 10240.0 // Hz
	DefaultFrequency  = 50.0    // Hz
	DefaultVoltage    = 230.0   // V, phase-to-neutral RMS

	// defaultRatedVA is the three-phase apparent power whose phase current
	// is the default IL: 3·230 V·160 A, the North Weir scenario.
	defaultRatedVA = 3 * 230.0 * 160.0
	// defaultIscPerIL is the default Isc/IL ratio: 6.1 kA / 160 A, the
	// North Weir scenario (IEEE 519 row 20 < Isc/IL < 50).
	defaultIscPerIL = 6100.0 / 160.0
	// defaultNeutralI3A is the default 3rd-harmonic neutral current from
	// single-phase loads at IL = 160 A (invented, no source).
	defaultNeutralI3A = 2.0
)

// Chan is one generated channel.
type Chan struct {
	Name   string       // unique, non-empty
	Kind   metrics.Kind // metrics.Voltage or metrics.Current
	Phase  byte         // 'a', 'b', 'c'; 'n' (neutral) for currents only
	To     byte         // voltages: 0 for phase-to-neutral, else the second phase of a line-to-line voltage (v_Phase − v_To)
	Share  float64      // currents: the fraction of the load current this CT carries (one drive of several on the bus); 0 = 1, the whole load
	Scale  float64      // engineering = raw·Scale + Offset; 0 = 1
	Offset float64      // engineering units
}

// FilterProfile describes how the input reactor/filter condition changes
// over simulated time. The condition is 1.0 when the reactor works as
// designed and 0.0 when it has no effect at all (the drive behaves as if it
// had none). It starts at 1.0, falls along a raised cosine to Worst at
// Period/2 and returns to 1.0 at Period, then repeats. Period 0 keeps the
// condition constant at 1.0 (Worst is then ignored).
type FilterProfile struct {
	Period time.Duration // full cycle; 0 = constant healthy
	Worst  float64       // lowest condition, in [0, 1]
}

// Dip is a voltage dip (Depth below 1) or swell (above 1): the voltage of
// the listed phases is multiplied by Depth from At to At+Duration.
type Dip struct {
	At       time.Duration // since sample 0 (simulated time), ≥ 0
	Depth    float64       // fraction of the voltage remaining, in [0, 2]; above 1 a swell
	Duration time.Duration // > 0
	Phases   string        // any of "a", "b", "c"; "" = "abc"
}

// Config configures a Source. The zero value (with nothing but defaults)
// simulates North Weir DC-2 with DefaultChannels.
type Config struct {
	SampleRate  float64 // Hz; 0 = DefaultSampleRate; must exceed 20·FrequencyHz
	FrequencyHz float64 // nominal, Hz; 0 = 50; 40..70
	VoltageV    float64 // nominal phase-to-neutral RMS, V; 0 = 230
	IscA        float64 // short-circuit current at the PCC, A; 0 = (6100/160)·ILA
	ILA         float64 // maximum demand load current, A; 0 = 110.4 kVA/(3·VoltageV) (160 A at 230 V)
	NeutralI3A  float64 // 3rd-harmonic neutral current from single-phase loads, A RMS; 0 = 2 A·ILA/160 A; < 0 = none
	Channels    []Chan  // in frame order; nil = DefaultChannels()

	Speed float64   // time acceleration: N× real time, paced with Sleep; 0 = as fast as possible (back-pressure only)
	Seed  uint64    // seed of the noise and the frequency wander (math/rand/v2 PCG)
	Start time.Time // simulated wall time of sample 0; sets the hour of the daily load profile

	Filter FilterProfile // input reactor/filter condition over time; zero = constant healthy
	Dips   []Dip         // optional voltage dips

	NoWander bool // hold the frequency at FrequencyHz exactly
	NoNoise  bool // add no noise

	Sleep func(time.Duration) // pacing; nil = time.Sleep
	Now   func() time.Time    // pacing; nil = time.Now
	Limit uint64              // frames to produce, then io.EOF; 0 = endless
}

// DefaultChannels returns the seven channels of a three-phase four-wire
// cabinet: va, vb, vc, ia, ib, ic, in, with scale 1 and offset 0.
func DefaultChannels() []Chan {
	return []Chan{
		{Name: "va", Kind: metrics.Voltage, Phase: 'a', Scale: 1},
		{Name: "vb", Kind: metrics.Voltage, Phase: 'b', Scale: 1},
		{Name: "vc", Kind: metrics.Voltage, Phase: 'c', Scale: 1},
		{Name: "ia", Kind: metrics.Current, Phase: 'a', Scale: 1},
		{Name: "ib", Kind: metrics.Current, Phase: 'b', Scale: 1},
		{Name: "ic", Kind: metrics.Current, Phase: 'c', Scale: 1},
		{Name: "in", Kind: metrics.Current, Phase: 'n', Scale: 1},
	}
}

// DefaultConfig returns the North Weir DC-2 demo: 10.24 kHz, 50 Hz,
// 230 V, Isc 6.1 kA, IL 160 A, the default channels, a filter that ages to
// condition 0.3 and recovers over 6 simulated hours, and one two-phase dip
// (55 % remaining for 140 ms) 15 minutes after the start.
func DefaultConfig() Config {
	return Config{
		SampleRate:  DefaultSampleRate,
		FrequencyHz: DefaultFrequency,
		VoltageV:    DefaultVoltage,
		IscA:        6100,
		ILA:         160,
		Channels:    DefaultChannels(),
		Seed:        1,
		Start:       time.Date(2026, 3, 1, 0, 0, 0, 0, time.UTC),
		Filter:      FilterProfile{Period: 6 * time.Hour, Worst: 0.3},
		Dips:        []Dip{{At: 15 * time.Minute, Depth: 0.55, Duration: 140 * time.Millisecond, Phases: "ab"}},
	}
}

func finite(v float64) bool { return !math.IsNaN(v) && !math.IsInf(v, 0) }

// normalize fills defaults into a copy of cfg and validates it: the
// ratings, the channels, the dips, then the pacing functions.
func normalize(cfg Config) (Config, error) {
	if err := normalizeRatings(&cfg); err != nil {
		return cfg, err
	}
	chans, err := normalizeChannels(cfg.Channels)
	if err != nil {
		return cfg, err
	}
	cfg.Channels = chans
	if cfg.Dips, err = normalizeDips(cfg.Dips); err != nil {
		return cfg, err
	}
	if cfg.Sleep == nil {
		cfg.Sleep = time.Sleep
	}
	if cfg.Now == nil {
		cfg.Now = time.Now
	}
	return cfg, nil
}

// bad returns the ErrConfig of a field set to v, and why v is refused.
func bad(field string, v any, why string) error {
	return fmt.Errorf("sim: %s = %v: %s: %w", field, v, why, ErrConfig)
}

// normalizeRatings fills the defaults of, and checks, the scalar settings:
// frequency, sample rate, voltage, IL, Isc, the neutral's 3rd, Speed and the
// filter profile.
func normalizeRatings(cfg *Config) error {
	if cfg.FrequencyHz == 0 {
		cfg.FrequencyHz = DefaultFrequency
	}
	if !finite(cfg.FrequencyHz) || cfg.FrequencyHz < 40 || cfg.FrequencyHz > 70 {
		return bad("FrequencyHz", cfg.FrequencyHz, "want 40..70 Hz")
	}
	if cfg.SampleRate == 0 {
		cfg.SampleRate = DefaultSampleRate
	}
	if !finite(cfg.SampleRate) || cfg.SampleRate <= 20*cfg.FrequencyHz || cfg.SampleRate > 1e7 {
		return bad("SampleRate", cfg.SampleRate, "want more than 20 samples per cycle and at most 10 MHz")
	}
	if cfg.VoltageV == 0 {
		cfg.VoltageV = DefaultVoltage
	}
	if !finite(cfg.VoltageV) || cfg.VoltageV <= 0 || cfg.VoltageV > 1e6 {
		return bad("VoltageV", cfg.VoltageV, "want a positive voltage")
	}
	if cfg.ILA == 0 {
		cfg.ILA = defaultRatedVA / (3 * cfg.VoltageV)
	}
	if !finite(cfg.ILA) || cfg.ILA <= 0 || cfg.ILA > 1e6 {
		return bad("ILA", cfg.ILA, "want a positive current")
	}
	if cfg.IscA == 0 {
		cfg.IscA = defaultIscPerIL * cfg.ILA
	}
	if !finite(cfg.IscA) || cfg.IscA < cfg.ILA || cfg.IscA > 1e9 {
		return bad("IscA", cfg.IscA, "want a current at least ILA")
	}
	switch {
	case cfg.NeutralI3A == 0:
		cfg.NeutralI3A = defaultNeutralI3A * cfg.ILA / 160
	case cfg.NeutralI3A < 0:
		cfg.NeutralI3A = 0
	case !finite(cfg.NeutralI3A) || cfg.NeutralI3A > cfg.ILA:
		return bad("NeutralI3A", cfg.NeutralI3A, "want at most ILA")
	}
	if !finite(cfg.Speed) || cfg.Speed < 0 {
		return bad("Speed", cfg.Speed, "want 0 (as fast as possible) or a positive factor")
	}
	if cfg.Filter.Period < 0 {
		return bad("Filter.Period", cfg.Filter.Period, "want ≥ 0")
	}
	if !finite(cfg.Filter.Worst) || cfg.Filter.Worst < 0 || cfg.Filter.Worst > 1 {
		return bad("Filter.Worst", cfg.Filter.Worst, "want 0..1")
	}
	return nil
}

// normalizeChannels returns a copy of chans with Scale and Share defaulted
// (nil = DefaultChannels), after checking names, kinds and phases.
func normalizeChannels(in []Chan) ([]Chan, error) {
	if in == nil {
		in = DefaultChannels()
	}
	if len(in) == 0 {
		return nil, bad("Channels", "[]", "want at least one channel")
	}
	chans := make([]Chan, len(in))
	seen := make(map[string]bool, len(chans))
	for i, c := range in {
		field := fmt.Sprintf("Channels[%d]", i)
		if c.Name == "" || seen[c.Name] {
			return nil, bad(field+".Name", fmt.Sprintf("%q", c.Name), "want a unique non-empty name")
		}
		seen[c.Name] = true
		switch c.Kind {
		case metrics.Voltage:
			if c.Phase != 'a' && c.Phase != 'b' && c.Phase != 'c' {
				return nil, bad(field+".Phase", fmt.Sprintf("%q", c.Phase), "a voltage wants a, b or c")
			}
			if c.To != 0 && (c.To < 'a' || c.To > 'c' || c.To == c.Phase) {
				return nil, bad(field+".To", fmt.Sprintf("%q", c.To), "a line-to-line voltage wants a second phase a, b or c other than Phase")
			}
		case metrics.Current:
			if c.Phase != 'a' && c.Phase != 'b' && c.Phase != 'c' && c.Phase != 'n' {
				return nil, bad(field+".Phase", fmt.Sprintf("%q", c.Phase), "a current wants a, b, c or n")
			}
		default:
			return nil, bad(field+".Kind", c.Kind, "want voltage or current")
		}
		if c.Scale == 0 {
			c.Scale = 1
		}
		if c.Share == 0 {
			c.Share = 1
		}
		if !finite(c.Share) || c.Share < 0 || c.Share > 1 {
			return nil, bad(field+".Share", c.Share, "want a fraction of the load current in (0, 1]")
		}
		if !finite(c.Scale) || !finite(c.Offset) {
			return nil, bad(field+".Scale/Offset", fmt.Sprintf("%v/%v", c.Scale, c.Offset), "want finite numbers")
		}
		chans[i] = c
	}
	return chans, nil
}

// normalizeDips returns a copy of in with Phases defaulted ("" = "abc"),
// after checking times, durations, depths and phase letters.
func normalizeDips(in []Dip) ([]Dip, error) {
	dips := make([]Dip, len(in))
	for i, d := range in {
		field := fmt.Sprintf("Dips[%d]", i)
		if d.At < 0 {
			return nil, bad(field+".At", d.At, "want ≥ 0")
		}
		if d.Duration <= 0 {
			return nil, bad(field+".Duration", d.Duration, "want > 0")
		}
		if !finite(d.Depth) || d.Depth < 0 || d.Depth > 2 {
			return nil, bad(field+".Depth", d.Depth, "want the remaining fraction, 0..2 (above 1 a swell)")
		}
		if d.Phases == "" {
			d.Phases = "abc"
		}
		for j := 0; j < len(d.Phases); j++ {
			if p := d.Phases[j]; p != 'a' && p != 'b' && p != 'c' {
				return nil, bad(field+".Phases", fmt.Sprintf("%q", d.Phases), "want letters from a, b, c")
			}
		}
		dips[i] = d
	}
	return dips, nil
}
