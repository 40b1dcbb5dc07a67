package main

import (
	"fmt"
	"os"

	"github.com/gridloupe/gridloupe/cmd/internal/replaycmd"
	"github.com/gridloupe/gridloupe/config"
)

// preflight checks what `run` would find missing at start beyond the
// config's own validation: the files the config names exist and are
// readable (mqtt.password_file or password_env, the TLS files, a csv or wav
// source), and the summary's circuits fit its 1 KB (summaryCircuits).
// `config --check` runs it so that a file that passes there does not fail
// under `run` for one of these reasons. Exit codes as run's: 2 for
// the MQTT files, 1 for a missing or unreadable source file.
func preflight(cfg *config.Config) error {
	if cfg.MQTT.Broker != "" {
		if _, err := cfg.MQTT.Password(); err != nil {
			return usagef("%s: mqtt: %v", cfg.Path, err)
		}
		if _, err := mqttTLS(cfg); err != nil {
			return err
		}
		setup, _, err := replaycmd.SetupFromConfig(cfg)
		if err != nil {
			return err
		}
		if _, err := summaryCircuits(cfg, setup); err != nil {
			return err
		}
	}
	if k := cfg.Source.Kind; k == config.SourceCSV || k == config.SourceWAV {
		f, err := os.Open(cfg.Source.Path)
		if err != nil {
			// exit 1, as run gives for a missing input (DESIGN's table)
			return fmt.Errorf("%s: source.path: %w", cfg.Path, err)
		}
		f.Close()
	}
	return nil
}

// preflightMessage is what `config --check` prints for a file that passes.
func preflightMessage(path string, cfg *config.Config) string {
	return fmt.Sprintf("%s: ok (%d channels, wiring %s, %v Hz)\n", path, len(cfg.Channels), cfg.Wiring, cfg.Nominal.FrequencyHz)
}
