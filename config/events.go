package config

import (
	"fmt"
	"strings"
	"time"

	"go.yaml.in/yaml/v3"
)

// Events configures voltage-event detection (DESIGN "Voltage events").
// Percentages are of the declared voltage nominal.voltage_v. Detection is
// always on; these keys tune it.
type Events struct {
	DipPct          float64 // an event opens when a voltage channel's Urms(1/2) falls below this; default 90
	SwellPct        float64 // or rises above this; default 110
	InterruptionPct float64 // every voltage channel below this makes the dip an interruption; default 5
	HysteresisPct   float64 // a dip ends at dip_pct + this, a swell at swell_pct − this; default 2
	PreCycles       int     // nominal cycles captured before the start; default 10
	PostCycles      int     // nominal cycles captured after the end; default 20
	MaxCaptureS     float64 // a capture is cut at this length, seconds; default 4
}

// Event-detection defaults (DESIGN "Voltage events").
func defaultEvents() Events {
	return Events{DipPct: 90, SwellPct: 110, InterruptionPct: 5, HysteresisPct: 2,
		PreCycles: 10, PostCycles: 20, MaxCaptureS: 4}
}

// maxCaptureS bounds max_capture_s: 60 s of 16 channels at 20 kHz is 77 MB
// of ring, beyond any gateway this targets (common practice, no source).
const maxCaptureS = 60

func (d *decoder) events(n *yaml.Node, path string, e *Events) *Error {
	return d.mapping(n, path, "events", func(k string, v *yaml.Node, p string) *Error {
		switch k {
		case "dip_pct":
			return d.float(v, p, &e.DipPct)
		case "swell_pct":
			return d.float(v, p, &e.SwellPct)
		case "interruption_pct":
			return d.float(v, p, &e.InterruptionPct)
		case "hysteresis_pct":
			return d.float(v, p, &e.HysteresisPct)
		case "pre_cycles":
			return d.integer(v, p, 0, 600, &e.PreCycles)
		case "post_cycles":
			return d.integer(v, p, 0, 600, &e.PostCycles)
		case "max_capture_s":
			return d.float(v, p, &e.MaxCaptureS)
		}
		return d.errf(v, p, "internal: key has no decoder")
	})
}

func (v *validator) events() *Error {
	e := &v.c.Events
	switch {
	case !(e.InterruptionPct > 0 && e.InterruptionPct < e.DipPct):
		return v.fail("events.interruption_pct", "%g is out of range; allowed: more than 0 and less than dip_pct (%g)", e.InterruptionPct, e.DipPct)
	case e.HysteresisPct < 0 || e.HysteresisPct >= 10:
		return v.fail("events.hysteresis_pct", "%g is out of range; allowed: 0 to less than 10 (percent of nominal.voltage_v; 2 is common)", e.HysteresisPct)
	case !(e.DipPct+e.HysteresisPct < 100):
		return v.fail("events.dip_pct", "%g is out of range; allowed: dip_pct + hysteresis_pct less than 100", e.DipPct)
	case !(e.SwellPct-e.HysteresisPct > 100) || e.SwellPct > 1000:
		return v.fail("events.swell_pct", "%g is out of range; allowed: swell_pct − hysteresis_pct more than 100, up to 1000", e.SwellPct)
	case !(e.MaxCaptureS > 0 && e.MaxCaptureS <= maxCaptureS):
		return v.fail("events.max_capture_s", "%g is out of range; allowed: more than 0, at most %d seconds", e.MaxCaptureS, maxCaptureS)
	}
	return nil
}

// Disturbance is a voltage dip or swell the simulator injects
// (source.disturbances, kind sim only).
type Disturbance struct {
	At       time.Duration // simulated time since the source started
	LevelPct float64       // voltage during it, % of nominal: below 100 a dip, above a swell, 0 an interruption
	Duration time.Duration // > 0, at most 60 s
	Phases   string        // letters from a, b, c; "" = all three
	Line     int
}

// maxDisturbances bounds the list (common practice, no source).
const maxDisturbances = 64

func (d *decoder) disturbances(n *yaml.Node, path string, dst *[]Disturbance) *Error {
	return d.sequence(n, path, "disturbances", maxDisturbances, func(_ int, v *yaml.Node, ip string) *Error {
		x := Disturbance{Line: v.Line, LevelPct: -1}
		e := d.mapping(v, ip, "source.disturbances[]", func(k string, v *yaml.Node, p string) *Error {
			switch k {
			case "at":
				return d.duration(v, p, &x.At)
			case "level_pct":
				return d.float(v, p, &x.LevelPct)
			case "duration":
				return d.duration(v, p, &x.Duration)
			case "phases":
				return d.str(v, p, &x.Phases)
			}
			return d.errf(v, p, "internal: key has no decoder")
		})
		if e != nil {
			return e
		}
		*dst = append(*dst, x)
		return nil
	})
}

func (v *validator) disturbances() *Error {
	s := &v.c.Source
	v.c.Disturbances = v.dist
	if len(v.dist) > 0 && s.Kind != SourceSim {
		return v.fail("source.disturbances", "applies to kind sim only")
	}
	for i, x := range v.dist {
		p := fmt.Sprintf("source.disturbances[%d]", i)
		switch {
		case x.LevelPct < 0 || x.LevelPct > 200:
			return v.fail(p+".level_pct", "required: the voltage during it in %% of nominal, 0 to 200 (90 or less is a dip, 110 or more a swell with the default thresholds)")
		case x.Duration <= 0 || x.Duration > time.Minute:
			return v.fail(p+".duration", "required: more than 0, at most 1m (such as 120ms)")
		case strings.Trim(x.Phases, "abc") != "":
			return v.fail(p+".phases", "%q: use letters from a, b, c (\"\" = all three)", x.Phases)
		}
	}
	return nil
}
