package replaycmd

import (
	"fmt"
	"math"

	"github.com/gridloupe/gridloupe/cmd/internal/cli"
	"github.com/gridloupe/gridloupe/config"
	"github.com/gridloupe/gridloupe/metrics"
	"github.com/gridloupe/gridloupe/stream"
)

// SetupFromConfig translates the validated config into the computations'
// setup and the per-channel calibration.
func SetupFromConfig(cfg *config.Config) (*metrics.Setup, []stream.Cal, error) {
	s := metrics.Setup{
		Orders:    cfg.Harmonics.Orders,
		AllOrders: cfg.Harmonics.All,
		NominalV:  cfg.Nominal.VoltageV,
		NominalI:  cfg.Nominal.CurrentA,
		ILA:       cfg.ILA,
		Wiring:    metrics.Wye,
		Reference: -1,
	}
	switch cfg.Wiring {
	case config.WiringSinglePhase:
		s.Wiring = metrics.SinglePhase
	case config.WiringDelta:
		s.Wiring = metrics.Delta
	}
	cal := make([]stream.Cal, len(cfg.Channels))
	for i, ch := range cfg.Channels {
		k := metrics.Voltage
		if ch.Kind == "current" {
			k = metrics.Current
		}
		ph, to := byte('a'), byte(0)
		if len(ch.Phase) > 0 {
			ph = ch.Phase[0]
		}
		if len(ch.Phase) > 1 {
			to = ch.Phase[1] // a line-to-line voltage (delta)
		}
		s.Channels = append(s.Channels, metrics.Channel{Name: ch.Name, Kind: k, Phase: ph, To: to,
			FullScale: ch.FullScale, DelayS: ch.DelayUS * 1e-6})
		cal[i] = stream.Cal{Scale: ch.Scale, Offset: ch.Offset}
		if ch.Name == cfg.Reference {
			s.Reference = i
		}
	}
	for _, c := range cfg.Circuits {
		mc := metrics.Circuit{Name: c.Name, ILA: c.ILA}
		for _, n := range c.Currents {
			mc.Currents = append(mc.Currents, cfg.ChannelIndex(n))
		}
		s.Circuits = append(s.Circuits, mc)
	}
	if s.Reference < 0 {
		for i, ch := range s.Channels {
			if ch.Kind == metrics.Voltage {
				s.Reference = i
				break
			}
		}
	}
	setup, err := metrics.NewSetup(s)
	if err != nil {
		return nil, nil, &cli.UsageError{Err: fmt.Errorf("%s: %w", cfg.Path, err)}
	}
	return setup, cal, nil
}

// PipelineConfig builds the stream configuration for a sample rate.
func PipelineConfig(cfg *config.Config, setup *metrics.Setup, cal []stream.Cal, fs float64) stream.Config {
	return stream.Config{
		Setup:      setup,
		Cal:        cal,
		SampleRate: fs,
		NominalHz:  cfg.Nominal.FrequencyHz,
		LockMinRMS: cfg.LockMinPct / 100 * cfg.Nominal.VoltageV,
		Events:     EventsConfig(cfg),
	}
}

// ResolveRate reconciles the config's sample_rate_hz with the input's own
// rate (WAV header or CSV t column): they must agree when both are given.
func ResolveRate(cfg *config.Config, fromInput float64, inputPath string) (float64, error) {
	// a rate from a t column carries rounding: snap to a whole hertz when
	// it is within a part per million of one
	if r := math.Round(fromInput); fromInput > 0 && math.Abs(fromInput-r) <= 1e-6*fromInput {
		fromInput = r
	}
	switch {
	case fromInput > 0 && cfg.SampleRateHz > 0:
		if math.Abs(fromInput-cfg.SampleRateHz) > 1e-4*cfg.SampleRateHz {
			return 0, cli.Usagef("%s: sample_rate_hz %v disagrees with %v Hz from %s; remove the key or correct it", cfg.Path, cfg.SampleRateHz, fromInput, inputPath)
		}
		return cfg.SampleRateHz, nil
	case fromInput > 0:
		return fromInput, nil
	case cfg.SampleRateHz > 0:
		return cfg.SampleRateHz, nil
	}
	return 0, cli.Usagef("%s: %s carries no sample rate (no t column); set sample_rate_hz in the config", cfg.Path, inputPath)
}

// CheckRate rejects rates too low for the requested orders by config's
// one sample-rate rule (config.Config.CheckSampleRate: order h at up to
// 1.15 × nominal needs fs above 2·h·1.15·f), as a usage error.
func CheckRate(cfg *config.Config, fs float64) error {
	if err := cfg.CheckSampleRate(fs); err != nil {
		return &cli.UsageError{Err: err}
	}
	return nil
}
