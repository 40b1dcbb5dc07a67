package web

import (
	"github.com/gridloupe/gridloupe/metrics"
	"github.com/gridloupe/gridloupe/stream/live"
)

const ns = "gridloupe"

// fieldFamily is one metric family built from record fields.
type fieldFamily struct {
	name, help string
	fields     []live.Field
	labels     []string // which of circuit, channel, phase the family carries
}

// collector turns the board into metric families at each scrape. Undefined
// values are left out (a gap in the graph), never exported as NaN.
type collector struct {
	cfg      *Config
	constL   []label // site and gateway
	families []*fieldFamily
}

func newCollector(cfg *Config) *collector {
	c := &collector{cfg: cfg, constL: []label{{"gateway", cfg.Gateway}, {"site", cfg.Site}}}
	byName := map[string]*fieldFamily{}
	for _, f := range live.Fields(cfg.Board.Setup()) {
		fam := byName[f.Metric]
		if fam == nil {
			fam = &fieldFamily{name: ns + "_" + f.Metric, help: f.Help}
			byName[f.Metric] = fam
			c.families = append(c.families, fam)
		}
		fam.fields = append(fam.fields, f)
	}
	for _, fam := range c.families {
		var hasCh, hasPh, hasCirc bool
		for _, f := range fam.fields {
			hasCh = hasCh || f.Channel != ""
			hasPh = hasPh || f.Phase != ""
			hasCirc = hasCirc || f.Circuit != ""
		}
		if hasCirc {
			fam.labels = append(fam.labels, "circuit")
		}
		if hasCh {
			fam.labels = append(fam.labels, "channel")
		}
		if hasPh {
			fam.labels = append(fam.labels, "phase")
		}
	}
	return c
}

// The families that do not come from record fields.
const (
	helpAge      = "Seconds since the newest value of the level arrived."
	helpAlarm    = "1 while the alarm rule is raised, else 0."
	helpStored   = "Aggregates committed to the store since start."
	helpDropped  = "Aggregates a live source's full queue dropped since start."
	helpOutbox   = "Messages waiting in the MQTT outbox."
	helpStore    = "Size of the store file."
	helpWindows  = "Measurement windows computed since start."
	helpMQTT     = "1 while the MQTT client is connected."
	helpStoreErr = "Store writes that failed since start."
	helpImport   = "Active energy taken from the supply, per circuit (1 kWh = 3.6e6 J)."
	helpExport   = "Active energy fed back to the supply, per circuit."
	helpReact    = "Fundamental reactive energy per circuit and quadrant (1 kvarh = 3.6e6 var s)."
	helpDCurrent = "Present demand current (average over the demand interval)."
	helpDMaxCur  = "Largest demand current of the month in progress (UTC)."
	helpDPower   = "Present total active-power demand."
	helpDMaxPow  = "Largest total active-power demand of the month in progress (UTC)."
	helpIL       = "IEEE 519 maximum demand load current IL: from the config, or estimated from the stored monthly maxima."
)

// collect reads the board once per level and returns every family.
func (c *collector) collect() []*family {
	gauge := func(name, help string) *family { return &family{name: ns + "_" + name, help: help} }
	counter := func(name, help string) *family { return &family{name: ns + "_" + name, help: help, counter: true} }
	fields := make([]*family, len(c.families))
	for i, ff := range c.families {
		fields[i] = &family{name: ff.name, help: ff.help}
	}
	age := gauge("value_age_seconds", helpAge)
	b := c.cfg.Board
	for _, iv := range live.Levels() {
		r, _ := b.Latest(iv)
		if r == nil {
			continue
		}
		if a, ok := b.Age(iv); ok {
			age.add(a, c.constL, "level", iv.String())
		}
		for k, ff := range c.families {
			for i := range ff.fields {
				f := &ff.fields[i]
				v := f.Value(r)
				if metrics.IsNull(v) {
					continue
				}
				lv := make([]string, 0, 2+2*len(ff.labels))
				lv = append(lv, "level", iv.String())
				for _, l := range ff.labels {
					switch l {
					case "circuit":
						lv = append(lv, l, f.Circuit)
					case "channel":
						lv = append(lv, l, f.Channel)
					default:
						lv = append(lv, l, f.Phase)
					}
				}
				fields[k].add(v*f.Scale, c.constL, lv...)
			}
		}
	}
	alarm := gauge("alarm_active", helpAlarm)
	active := b.Active()
	for _, a := range c.cfg.Alarms {
		v := 0.0
		for _, n := range active {
			if n == a.Name {
				v = 1
			}
		}
		alarm.add(v, c.constL, "alarm", a.Name, "severity", a.Severity)
	}
	h := b.Health()
	one := func(f *family, v float64) *family { f.add(v, c.constL); return f }
	out := append(fields, age, alarm,
		one(counter("records_stored_total", helpStored), float64(h.RecordsStored)),
		one(counter("records_dropped_total", helpDropped), float64(h.RecordsDropped)),
		one(gauge("outbox_messages", helpOutbox), float64(h.OutboxDepth)),
		one(gauge("store_bytes", helpStore), float64(h.StoreBytes)),
		one(counter("windows_total", helpWindows), float64(h.Windows)),
		one(gauge("mqtt_connected", helpMQTT), b2f(h.MQTTConnected)),
		one(counter("store_errors_total", helpStoreErr), float64(h.StoreErrors)))
	return c.collectEnergy(out, b.Energy())
}

// joulesPerWh converts Wh (and varh) to J (var s).
const joulesPerWh = 3600

func (c *collector) collectEnergy(out []*family, e live.Energy) []*family {
	if !e.Valid {
		return out
	}
	imp := &family{name: ns + "_active_energy_import_joules_total", help: helpImport, counter: true}
	exp := &family{name: ns + "_active_energy_export_joules_total", help: helpExport, counter: true}
	react := &family{name: ns + "_fundamental_reactive_energy_var_seconds_total", help: helpReact, counter: true}
	for _, r := range e.Readings {
		imp.add(r.ImportWh*joulesPerWh, c.constL, "circuit", r.Circuit)
		exp.add(r.ExportWh*joulesPerWh, c.constL, "circuit", r.Circuit)
		for q, v := range r.VarhQ {
			react.add(v*joulesPerWh, c.constL, "circuit", r.Circuit, "quadrant", "q"+string(rune('1'+q)))
		}
	}
	dCur := &family{name: ns + "_demand_current_amperes", help: helpDCurrent}
	dMaxCur := &family{name: ns + "_demand_month_max_current_amperes", help: helpDMaxCur}
	dPow := &family{name: ns + "_demand_power_watts", help: helpDPower}
	dMaxPow := &family{name: ns + "_demand_month_max_power_watts", help: helpDMaxPow}
	il := &family{name: ns + "_il_amperes", help: helpIL}
	gauge := func(f *family, v float64, lv ...string) {
		if !metrics.IsNull(v) {
			f.add(v, c.constL, lv...)
		}
	}
	for p, ph := range []string{"a", "b", "c"} {
		gauge(dCur, e.Demand.A[p], "phase", ph)
		gauge(dMaxCur, e.Demand.Month.MaxA[p], "phase", ph)
	}
	gauge(dPow, e.Demand.W)
	gauge(dMaxPow, e.Demand.Month.MaxW)
	if e.ILConfig > 0 {
		gauge(il, e.ILConfig, "basis", "config")
	}
	gauge(il, e.Estimate.A, "basis", "estimate")
	return append(out, imp, exp, react, dCur, dMaxCur, dPow, dMaxPow, il)
}

func b2f(b bool) float64 {
	if b {
		return 1
	}
	return 0
}
