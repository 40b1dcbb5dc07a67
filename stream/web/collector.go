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
		var hasCh, hasPh bool
		for _, f := range fam.fields {
			hasCh = hasCh || f.Channel != ""
			hasPh = hasPh || f.Phase != ""
		}
		names := []string{"level"}
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
	return c
}

// Describe sends every descriptor.
func (c *collector) Describe(ch chan<- *prometheus.Desc) {
	for _, f := range c.families {
		ch <- f.desc
	}
	for _, d := range []*prometheus.Desc{c.age, c.alarm, c.stored, c.dropped, c.outbox, c.store, c.windows, c.mqtt, c.storeErr} {
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
					if l == "channel" {
						lv = append(lv, f.Channel)
					} else {
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
}

func b2f(b bool) float64 {
	if b {
		return 1
	}
	return 0
}
