package alarm

import (
	"fmt"
	"math"
	"time"

	"github.com/gridloupe/gridloupe/metrics"
	"github.com/gridloupe/gridloupe/metrics/limits"
)

// PCCNote is the sentence every IEEE 519-based rule's text carries.
const PCCNote = "IEEE 519 limits apply at the PCC; inside the cabinet this is a reference"

// Defaults of the example config's rules (DESIGN.md "Daemon keys": the
// current-distortion example uses deadband 0.5, delays 20 min, min load 10 %).
const (
	defDelay         = 20 * time.Minute
	defDistDeadband  = 0.5  // % (of IL for TDD, of the fundamental for THD)
	defTDDMinLoadPct = 10.0 // % of IL
	defPFThreshold   = 0.90
	defPFDeadband    = 0.02
	defPFMinLoadPct  = 20.0 // % of IL
	defSeverity      = "warning"
)

// DefaultRules returns the example config's default rules for setup s:
//
//   - per current channel in currentChannels, when il > 0: TDD over orders
//     2..50 (tdd_pct when s lacks all orders) at the 10 min level, above the
//     IEEE 519-2014 Table 2 TDD limit of the row for isc/il (the strictest
//     row, ISC/IL < 20, when isc is unknown), deadband 0.5, quiet below
//     10 % of il on that channel;
//   - per voltage channel in voltageChannels, when nominalV > 0: THD over
//     orders 2..50 (thd_pct without all orders), 10 min, above the Table 1
//     THD limit for the bus voltage (√3·nominalV line-to-line for wye,
//     nominalV for single-phase; 8 % at ≤ 1 kV), deadband 0.5;
//   - when s has a phase with both a voltage and a current: total PF below
//     0.90 at 10 min, deadband 0.02, quiet below 20 % of il over the phase
//     currents (no minimum load when il is 0).
//
// All use a 20 min on and off delay and severity warning (the example rule
// in DESIGN.md "Daemon keys"). Indices that are not channels of the right
// kind are skipped. The 519-based rules' text carries PCCNote.
func DefaultRules(s *metrics.Setup, il, isc, nominalV float64, currentChannels, voltageChannels []int) []Rule {
	if s == nil {
		return nil
	}
	var out []Rule
	if il > 0 {
		row := limits.CurrentLimits(isc / il)
		m, what := MetricTDDH50, "TDD (orders 2–50)"
		if !s.AllOrders {
			m, what = MetricTDD, "TDD"
		}
		for _, ci := range currentChannels {
			if !isKind(s, ci, metrics.Current) {
				continue
			}
			name := s.Channels[ci].Name
			out = append(out, Rule{
				Name: "current-distortion-" + name, Metric: m,
				Target: Target{Channel: ci}, Level: metrics.Int10min,
				Above: true, Threshold: row.TDD, Deadband: defDistDeadband,
				OnDelay: defDelay, OffDelay: defDelay, Severity: defSeverity,
				MinLoad: il * defTDDMinLoadPct / 100, LoadChannels: []int{ci},
				Text: fmt.Sprintf("current %s on %s above %g %% of IL (%s Table 2, ISC/IL %s). %s.",
					what, name, row.TDD, limits.Edition, row.RatioLabel, PCCNote),
			})
		}
	}
	busV := nominalV
	if s.Wiring == metrics.Wye {
		busV = math.Sqrt(3) * nominalV
	}
	if _, thd := limits.VoltageLimits(busV); !math.IsNaN(thd) {
		m, what := MetricTHDH50, "THD (orders 2–50)"
		if !s.AllOrders {
			m, what = MetricTHD, "THD"
		}
		for _, ci := range voltageChannels {
			if !isKind(s, ci, metrics.Voltage) {
				continue
			}
			name := s.Channels[ci].Name
			out = append(out, Rule{
				Name: "voltage-distortion-" + name, Metric: m,
				Target: Target{Channel: ci}, Level: metrics.Int10min,
				Above: true, Threshold: thd, Deadband: defDistDeadband,
				OnDelay: defDelay, OffDelay: defDelay, Severity: defSeverity,
				Text: fmt.Sprintf("voltage %s on %s above %g %% (%s Table 1, bus %.0f V). %s.",
					what, name, thd, limits.Edition, busV, PCCNote),
			})
		}
	}
	if s.HasTotal() {
		r := Rule{
			Name: "power-factor", Metric: MetricPF,
			Target: Target{Channel: -1, Total: true}, Level: metrics.Int10min,
			Above: false, Threshold: defPFThreshold, Deadband: defPFDeadband,
			OnDelay: defDelay, OffDelay: defDelay, Severity: defSeverity,
			Text: fmt.Sprintf("total power factor below %.2f at load", defPFThreshold),
		}
		if il > 0 {
			r.MinLoad = il * defPFMinLoadPct / 100
			for _, p := range s.Products {
				r.LoadChannels = append(r.LoadChannels, p.I)
			}
		}
		out = append(out, r)
	}
	return out
}

func isKind(s *metrics.Setup, ci int, k metrics.Kind) bool {
	return ci >= 0 && ci < len(s.Channels) && s.Channels[ci].Kind == k
}
