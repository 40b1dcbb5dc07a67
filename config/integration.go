package config

import (
	"time"

	"go.yaml.in/yaml/v3"
)

// Modbus configures the read-only Modbus TCP server for a building
// management system. The section's presence turns it on.
type Modbus struct {
	Enabled   bool   // the modbus section is present
	Listen    string // host:port; default 127.0.0.1:5020 (loopback)
	UnitID    int    // unit identifier answered, 1..247; default 1 (0 and 255 are always answered too)
	WordOrder string // WordHighFirst (default) or WordLowFirst: which half of a float32 comes first
}

// HTTP configures the HTTP listener (Prometheus /metrics, JSON, status
// page). The section's presence turns it on.
type HTTP struct {
	Enabled bool   // the http section is present
	Listen  string // host:port; default 127.0.0.1:8080 (loopback)
}

// Demand configures the demand (average over an interval) of the phase
// currents and the total active power.
type Demand struct {
	Interval time.Duration // averaging interval; default 15m; 1m..60m, dividing an hour
	Method   string        // DemandFixed (default: clock-aligned blocks) or DemandSliding (the last Interval, moved every 3 s)
}

// Spellings of the integration enums.
const (
	WordHighFirst = "high_first"
	WordLowFirst  = "low_first"
	DemandFixed   = "fixed"
	DemandSliding = "sliding"
)

// Integration defaults.
const (
	defaultModbusListen = "127.0.0.1:5020"
	defaultHTTPListen   = "127.0.0.1:8080"
	defaultDemand       = 15 * time.Minute
)

func (d *decoder) modbus(n *yaml.Node, path string, m *Modbus) *Error {
	m.Enabled = true
	return d.mapping(n, path, "modbus", func(k string, v *yaml.Node, p string) *Error {
		switch k {
		case "listen":
			return d.str(v, p, &m.Listen)
		case "unit_id":
			return d.integer(v, p, 1, 247, &m.UnitID)
		case "word_order":
			return d.enum(v, p, &m.WordOrder, WordHighFirst, WordLowFirst)
		}
		return d.errf(v, p, "internal: key has no decoder")
	})
}

func (d *decoder) http(n *yaml.Node, path string, h *HTTP) *Error {
	h.Enabled = true
	return d.mapping(n, path, "http", func(k string, v *yaml.Node, p string) *Error {
		switch k {
		case "listen":
			return d.str(v, p, &h.Listen)
		}
		return d.errf(v, p, "internal: key has no decoder")
	})
}

func (d *decoder) demand(n *yaml.Node, path string, dm *Demand) *Error {
	return d.mapping(n, path, "demand", func(k string, v *yaml.Node, p string) *Error {
		switch k {
		case "interval":
			return d.duration(v, p, &dm.Interval)
		case "method":
			return d.enum(v, p, &dm.Method, DemandFixed, DemandSliding)
		}
		return d.errf(v, p, "internal: key has no decoder")
	})
}

// integration checks the modbus, http and demand sections.
func (v *validator) integration() *Error {
	for _, l := range []struct {
		key string
		dst *string
	}{{"modbus.listen", &v.c.Modbus.Listen}, {"http.listen", &v.c.HTTP.Listen}} {
		if !v.has(l.key) {
			continue
		}
		if _, port, err := splitHostPort(*l.dst); err != nil || port == "" {
			return v.fail(l.key, "%q is not host:port, such as 127.0.0.1:5020 (loopback) or 0.0.0.0:5020 (every interface)", *l.dst)
		}
	}
	dm := v.c.Demand
	if dm.Interval < time.Minute || dm.Interval > time.Hour || time.Hour%dm.Interval != 0 || dm.Interval%time.Minute != 0 {
		return v.fail("demand.interval", "%v is not allowed: whole minutes from 1m to 60m that divide an hour (5m, 15m, 30m, ...)", dm.Interval)
	}
	return nil
}
