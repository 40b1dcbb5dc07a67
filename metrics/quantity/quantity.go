package quantity

import "slices"

// ID indexes one table: Channel IDs index Channels(), Phase IDs Phases().
type ID uint8

// Per-channel quantities, in output order (JSON keys, CSV columns, store
// fields). Append new ones before NumChannel: the order is the interface.
const (
	RMS         ID = iota // rms
	DC                    // dc
	THD                   // thd_pct
	THDH50                // thd_h50_pct
	TDD                   // tdd_pct
	TDDH50                // tdd_h50_pct
	CrestFactor           // crest_factor
	NumChannel            // number of per-channel quantities
)

// Per-phase quantities, in output order.
const (
	P        ID = iota // p_w
	P1                 // p1_w
	Q1                 // q_var
	S                  // s_va
	S1                 // s1_va
	SN                 // sn_va
	DI                 // di_var
	DV                 // dv_var
	SH                 // sh_va
	PF                 // pf
	DPF                // dpf
	NumPhase           // number of per-phase quantities
)

// Agg says how an interval (3 s, 10 min, 2 h) combines window values.
type Agg uint8

// Aggregation rules (README "Aggregation").
const (
	// Derived: the Aggregator's own code: rms and dc (which feed THD and
	// TDD), the means p_w, p1_w, q_var (which feed pf and dpf), and the
	// values recomputed from aggregated magnitudes (THD, TDD, PF, the
	// apparent and distortion powers).
	Derived Agg = iota + 1
	Mean        // arithmetic mean of the non-null window values
	RMS2        // square root of the mean of squares
	Max         // largest window value
)

// Generic reports whether the Aggregator combines a quantity by the rule
// alone, with no code of its own: every rule but Derived.
func (a Agg) Generic() bool { return a == Mean || a == RMS2 || a == Max }

// Out is a set of outputs.
type Out uint8

// Outputs.
const (
	JSON  Out = 1 << iota // replay/export JSON Lines, MQTT telemetry
	CSV                   // --format csv columns
	Wide                  // --format wide, one column per channel
	Store                 // kept in the bbolt store's records
)

// Need is a set of conditions for a quantity to apply to a channel.
type Need uint8

// Conditions.
const (
	AllOrders Need = 1 << iota // harmonics: all (orders 2..50 computed)
	Current                    // current channels only
	IL                         // il_a configured
)

// Q describes one quantity.
type Q struct {
	Name  string // key in JSON and CSV (after "<channel>." or "phase.<p>."), the alarm metric name
	Unit  string // "V or A" (the channel's), "%", "% of IL", "W", "var", "VA", "ratio"
	Doc   string // one line for help texts
	Agg   Agg
	Out   Out
	Need  Need
	Alarm bool // alarm rules may watch it (metric: Name)
	// Since is the store record version that first holds it; records of
	// older versions decode it as null.
	Since uint8
	// Short is the wide table's column label after the channel name.
	Short string
}

// Applies reports whether q is present on a channel of the given kind in
// a setup with (allOrders) orders 2..50 and (hasIL) il_a.
func (q Q) Applies(current, allOrders, hasIL bool) bool {
	return (q.Need&AllOrders == 0 || allOrders) && (q.Need&Current == 0 || current) && (q.Need&IL == 0 || hasIL)
}

// Names of the quantities alarm rules may watch, defined here once
// (metrics/alarm's Metric constants and config's allowed list use them).
const (
	NameRMS         = "rms"
	NameTHD         = "thd_pct"
	NameTHDH50      = "thd_h50_pct"
	NameTDD         = "tdd_pct"
	NameTDDH50      = "tdd_h50_pct"
	NameCrestFactor = "crest_factor"
	NamePF          = "pf"
	NameDPF         = "dpf"
	// Alarm metrics outside the two tables: one harmonic of a channel, and
	// system-wide values.
	NamePct        = "pct"    // one harmonic, % of the channel's fundamental
	NamePctIL      = "pct_il" // one current harmonic, % of IL
	NameFreq       = "freq_hz"
	NameUnbalanceV = "unbalance_voltage_pct"
	NameUnbalanceI = "unbalance_current_pct"
)

// AlarmMetrics lists every metric an alarm rule may watch, for validation
// and help texts: the per-channel quantities alarms may watch, pct and
// pct_il, the per-phase ones, then the system-wide ones.
func AlarmMetrics() []string {
	out := AlarmChannelNames()
	out = append(out, NamePct, NamePctIL)
	out = append(out, AlarmPhaseNames()...)
	return append(out, NameFreq, NameUnbalanceV, NameUnbalanceI)
}

var channelTable = [NumChannel]Q{
	RMS:         {Name: NameRMS, Unit: "V or A", Doc: "RMS value, DC included", Agg: Derived, Out: JSON | CSV | Store, Alarm: true, Since: 1},
	DC:          {Name: "dc", Unit: "V or A", Doc: "mean value", Agg: Derived, Out: JSON | CSV | Store, Since: 1},
	THD:         {Name: NameTHD, Unit: "%", Doc: "THD-F, everything but DC and the fundamental", Agg: Derived, Out: JSON | CSV | Store, Alarm: true, Since: 1},
	THDH50:      {Name: NameTHDH50, Unit: "%", Doc: "THD over orders 2..50", Agg: Derived, Out: JSON | CSV | Store, Need: AllOrders, Alarm: true, Since: 1},
	TDD:         {Name: NameTDD, Unit: "% of IL", Doc: "TDD, everything but DC and the fundamental", Agg: Derived, Out: JSON | CSV | Store, Need: Current | IL, Alarm: true, Since: 1},
	TDDH50:      {Name: NameTDDH50, Unit: "% of IL", Doc: "TDD over orders 2..50", Agg: Derived, Out: JSON | CSV | Store, Need: AllOrders | Current | IL, Alarm: true, Since: 1},
	CrestFactor: {Name: NameCrestFactor, Unit: "ratio", Doc: "peak |x| over RMS in the window; intervals keep the largest", Agg: Max, Out: JSON | CSV | Wide | Store, Alarm: true, Since: 4, Short: "CF"},
}

var phaseTable = [NumPhase]Q{
	P:   {Name: "p_w", Unit: "W", Doc: "active power, mean of v·i", Agg: Derived, Out: JSON | CSV | Store, Since: 1},
	P1:  {Name: "p1_w", Unit: "W", Doc: "fundamental active power", Agg: Derived, Out: JSON | CSV | Store, Since: 1},
	Q1:  {Name: "q_var", Unit: "var", Doc: "fundamental reactive power, + inductive", Agg: Derived, Out: JSON | CSV | Store, Since: 1},
	S:   {Name: "s_va", Unit: "VA", Doc: "apparent power V·I", Agg: Derived, Out: JSON | CSV | Store, Since: 1},
	S1:  {Name: "s1_va", Unit: "VA", Doc: "fundamental apparent power", Agg: Derived, Out: JSON | CSV | Store, Since: 1},
	SN:  {Name: "sn_va", Unit: "VA", Doc: "non-fundamental apparent power", Agg: Derived, Out: JSON | CSV | Store, Since: 1},
	DI:  {Name: "di_var", Unit: "var", Doc: "current distortion power V1·IH", Agg: Derived, Out: JSON | CSV | Store, Since: 1},
	DV:  {Name: "dv_var", Unit: "var", Doc: "voltage distortion power VH·I1", Agg: Derived, Out: JSON | CSV | Store, Since: 1},
	SH:  {Name: "sh_va", Unit: "VA", Doc: "harmonic apparent power VH·IH", Agg: Derived, Out: JSON | CSV | Store, Since: 1},
	PF:  {Name: NamePF, Unit: "ratio", Doc: "power factor P/S with the sign of P", Agg: Derived, Out: JSON | CSV | Store, Alarm: true, Since: 1},
	DPF: {Name: NameDPF, Unit: "ratio", Doc: "displacement power factor with the sign of P1", Agg: Derived, Out: JSON | CSV | Store, Alarm: true, Since: 1},
}

// Channels returns the per-channel table, indexed by ID (a copy).
func Channels() []Q { return slices.Clone(channelTable[:]) }

// Phases returns the per-phase table, indexed by ID (a copy).
func Phases() []Q { return slices.Clone(phaseTable[:]) }

// Channel returns the per-channel quantity id.
func Channel(id ID) Q { return channelTable[id] }

// Phase returns the per-phase quantity id.
func Phase(id ID) Q { return phaseTable[id] }

// ChannelByName returns the per-channel quantity called name.
func ChannelByName(name string) (ID, bool) {
	for i := range channelTable {
		if channelTable[i].Name == name {
			return ID(i), true
		}
	}
	return 0, false
}

// AlarmChannelNames lists the per-channel quantities alarm rules may
// watch, in table order.
func AlarmChannelNames() []string { return alarmNames(channelTable[:]) }

// AlarmPhaseNames lists the per-phase quantities alarm rules may watch.
func AlarmPhaseNames() []string { return alarmNames(phaseTable[:]) }

func alarmNames(tab []Q) []string {
	var out []string
	for _, q := range tab {
		if q.Alarm {
			out = append(out, q.Name)
		}
	}
	return out
}
