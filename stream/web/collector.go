package web

import (
	"github.com/prometheus/client_golang/prometheus"

	"github.com/gridloupe/gridloupe/metrics"
	"github.com/gridloupe/gridloupe/stream/live"
)

const ns = "gridloupe"

// family is one Prometheus metric family built from record fields.
type family struct {
	desc   *prometheus.Desc
	fields []live.Field
	labels []string // which of channel, phase the family carries
}

// collector turns the board into metrics at each scrape. Undefined values
// are left out (a gap in the graph), never exported as NaN.
type collector struct {
	cfg      *Config
	families []*family
	age      *prometheus.Desc
	alarm    *prometheus.Desc
	stored   *prometheus.Desc
	dropped  *prometheus.Desc
	outbox   *prometheus.Desc
	store    *prometheus.Desc
	windows  *prometheus.Desc
	mqtt     *prometheus.Desc
	storeErr *prometheus.Desc
	eImport  *prometheus.Desc
	eExport  *prometheus.Desc
	eReact   *prometheus.Desc
	dCurrent *prometheus.Desc
	dMaxCur  *prometheus.Desc
	dPower   *prometheus.Desc
	dMaxPow  *prometheus.Desc
	il       *prometheus.Desc
}

func newCollector(cfg *Config) *collector {
	c := &collector{cfg: cfg}
	constL := prometheus.Labels{"site": cfg.Site, "gateway": cfg.Gateway}
	byName := map[string]*family{}
	for _, f := range live.Fields(cfg.Board.Setup()) {
		fam := byName[f.Metric]
		if fam == nil {
			fam = &family{}
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
		names := []string{"level"}
		if hasCirc {
			fam.labels = append(fam.labels, "circuit")
		}
		if hasCh {
			fam.labels = append(fam.labels, "channel")
		}
		if hasPh {
			fam.labels = append(fam.labels, "phase")
		}
		names = append(names, fam.labels...)
		f0 := fam.fields[0]
		fam.desc = prometheus.NewDesc(ns+"_"+f0.Metric, f0.Help, names, constL)
	}
	c.age = prometheus.NewDesc(ns+"_value_age_seconds", "Seconds since the newest value of the level arrived.", []string{"level"}, constL)
	c.alarm = prometheus.NewDesc(ns+"_alarm_active", "1 while the alarm rule is raised, else 0.", []string{"alarm", "severity"}, constL)
	c.stored = prometheus.NewDesc(ns+"_records_stored_total", "Aggregates committed to the store since start.", nil, constL)
	c.dropped = prometheus.NewDesc(ns+"_records_dropped_total", "Aggregates a live source's full queue dropped since start.", nil, constL)
	c.outbox = prometheus.NewDesc(ns+"_outbox_messages", "Messages waiting in the MQTT outbox.", nil, constL)
	c.store = prometheus.NewDesc(ns+"_store_bytes", "Size of the store file.", nil, constL)
	c.windows = prometheus.NewDesc(ns+"_windows_total", "Measurement windows computed since start.", nil, constL)
	c.mqtt = prometheus.NewDesc(ns+"_mqtt_connected", "1 while the MQTT client is connected.", nil, constL)
	c.storeErr = prometheus.NewDesc(ns+"_store_errors_total", "Store writes that failed since start.", nil, constL)
	c.eImport = prometheus.NewDesc(ns+"_active_energy_import_joules_total", "Active energy taken from the supply, per circuit (1 kWh = 3.6e6 J).", []string{"circuit"}, constL)
	c.eExport = prometheus.NewDesc(ns+"_active_energy_export_joules_total", "Active energy fed back to the supply, per circuit.", []string{"circuit"}, constL)
	c.eReact = prometheus.NewDesc(ns+"_fundamental_reactive_energy_var_seconds_total", "Fundamental reactive energy per circuit and quadrant (1 kvarh = 3.6e6 var s).", []string{"circuit", "quadrant"}, constL)
	c.dCurrent = prometheus.NewDesc(ns+"_demand_current_amperes", "Present demand current (average over the demand interval).", []string{"phase"}, constL)
	c.dMaxCur = prometheus.NewDesc(ns+"_demand_month_max_current_amperes", "Largest demand current of the month in progress (UTC).", []string{"phase"}, constL)
	c.dPower = prometheus.NewDesc(ns+"_demand_power_watts", "Present total active-power demand.", nil, constL)
	c.dMaxPow = prometheus.NewDesc(ns+"_demand_month_max_power_watts", "Largest total active-power demand of the month in progress (UTC).", nil, constL)
	c.il = prometheus.NewDesc(ns+"_il_amperes", "IEEE 519 maximum demand load current IL: from the config, or estimated from the stored monthly maxima.", []string{"basis"}, constL)
	return c
}

// Describe sends every descriptor.
func (c *collector) Describe(ch chan<- *prometheus.Desc) {
	for _, f := range c.families {
		ch <- f.desc
	}
	for _, d := range []*prometheus.Desc{c.age, c.alarm, c.stored, c.dropped, c.outbox, c.store, c.windows, c.mqtt, c.storeErr,
		c.eImport, c.eExport, c.eReact, c.dCurrent, c.dMaxCur, c.dPower, c.dMaxPow, c.il} {
		ch <- d
	}
}

// Collect reads the board once per level.
func (c *collector) Collect(ch chan<- prometheus.Metric) {
	b := c.cfg.Board
	for _, iv := range live.Levels() {
		r, _ := b.Latest(iv)
		if r == nil {
			continue
		}
		if age, ok := b.Age(iv); ok {
			ch <- prometheus.MustNewConstMetric(c.age, prometheus.GaugeValue, age, iv.String())
		}
		for _, fam := range c.families {
			for i := range fam.fields {
				f := &fam.fields[i]
				v := f.Value(r)
				if metrics.IsNull(v) {
					continue
				}
				lv := []string{iv.String()}
				for _, l := range fam.labels {
					switch l {
					case "circuit":
						lv = append(lv, f.Circuit)
					case "channel":
						lv = append(lv, f.Channel)
					default:
						lv = append(lv, f.Phase)
					}
				}
				ch <- prometheus.MustNewConstMetric(fam.desc, prometheus.GaugeValue, v*f.Scale, lv...)
			}
		}
	}
	active := b.Active()
	for _, a := range c.cfg.Alarms {
		v := 0.0
		for _, n := range active {
			if n == a.Name {
				v = 1
			}
		}
		ch <- prometheus.MustNewConstMetric(c.alarm, prometheus.GaugeValue, v, a.Name, a.Severity)
	}
	h := b.Health()
	ch <- prometheus.MustNewConstMetric(c.stored, prometheus.CounterValue, float64(h.RecordsStored))
	ch <- prometheus.MustNewConstMetric(c.dropped, prometheus.CounterValue, float64(h.RecordsDropped))
	ch <- prometheus.MustNewConstMetric(c.outbox, prometheus.GaugeValue, float64(h.OutboxDepth))
	ch <- prometheus.MustNewConstMetric(c.store, prometheus.GaugeValue, float64(h.StoreBytes))
	ch <- prometheus.MustNewConstMetric(c.windows, prometheus.CounterValue, float64(h.Windows))
	ch <- prometheus.MustNewConstMetric(c.mqtt, prometheus.GaugeValue, b2f(h.MQTTConnected))
	ch <- prometheus.MustNewConstMetric(c.storeErr, prometheus.CounterValue, float64(h.StoreErrors))
	c.collectEnergy(ch, b.Energy())
}

// joulesPerWh converts Wh (and varh) to J (var s).
const joulesPerWh = 3600

func (c *collector) collectEnergy(ch chan<- prometheus.Metric, e live.Energy) {
	if !e.Valid {
		return
	}
	for _, r := range e.Readings {
		ch <- prometheus.MustNewConstMetric(c.eImport, prometheus.CounterValue, r.ImportWh*joulesPerWh, r.Circuit)
		ch <- prometheus.MustNewConstMetric(c.eExport, prometheus.CounterValue, r.ExportWh*joulesPerWh, r.Circuit)
		for q, v := range r.VarhQ {
			ch <- prometheus.MustNewConstMetric(c.eReact, prometheus.CounterValue, v*joulesPerWh, r.Circuit, "q"+string(rune('1'+q)))
		}
	}
	gauge := func(d *prometheus.Desc, v float64, lv ...string) {
		if !metrics.IsNull(v) {
			ch <- prometheus.MustNewConstMetric(d, prometheus.GaugeValue, v, lv...)
		}
	}
	for p, ph := range []string{"a", "b", "c"} {
		gauge(c.dCurrent, e.Demand.A[p], ph)
		gauge(c.dMaxCur, e.Demand.Month.MaxA[p], ph)
	}
	gauge(c.dPower, e.Demand.W)
	gauge(c.dMaxPow, e.Demand.Month.MaxW)
	if e.ILConfig > 0 {
		gauge(c.il, e.ILConfig, "config")
	}
	gauge(c.il, e.Estimate.A, "estimate")
}

func b2f(b bool) float64 {
	if b {
		return 1
	}
	return 0
}
