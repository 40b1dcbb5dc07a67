package main

import (
	"strings"

	"github.com/gridloupe/gridloupe/config"
	"github.com/gridloupe/gridloupe/metrics"
	"github.com/gridloupe/gridloupe/stream/summary"
)

// summaryCircuits returns the indices in s.Circuits of the circuits the
// MQTT summary carries: those mqtt.summary_circuits lists, else every
// circuit (nil without circuits or without summaries). A config whose
// summary could pass summary.MaxBytes with every figure at its widest is
// a usage error naming the key and how many of the circuits fit, so the
// summary's 1 KB bound holds for every record.
func summaryCircuits(cfg *config.Config, s *metrics.Setup) ([]int, error) {
	if len(s.Circuits) == 0 || cfg.MQTT.Broker == "" || len(cfg.MQTT.Summary) == 0 {
		return nil, nil
	}
	names := cfg.MQTT.SummaryCircuits
	if names == nil {
		for _, c := range s.Circuits {
			names = append(names, c.Name)
		}
	}
	pick := make([]int, 0, len(names))
	for _, n := range names {
		if k := s.CircuitIndex(n); k >= 0 { // config validation has checked the names
			pick = append(pick, k)
		}
	}
	w := summary.Widest(s, pick, cfg.Site, cfg.Gateway)
	if w <= summary.MaxBytes {
		return pick, nil
	}
	fit := 0
	for fit < len(pick) && summary.Widest(s, pick[:fit+1], cfg.Site, cfg.Gateway) <= summary.MaxBytes {
		fit++
	}
	return nil, usagef("%s: mqtt.summary_circuits: the summary with circuits %s can reach %d bytes with every figure at its widest, over the %d bytes a summary may take; list in mqtt.summary_circuits the circuits a BMS trends, at most %d of these (the full record on telemetry carries every circuit), or set mqtt.summary: []",
		cfg.Path, strings.Join(names, ", "), w, summary.MaxBytes, fit)
}
