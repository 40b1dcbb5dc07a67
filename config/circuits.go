package config

import (
	"fmt"
	"slices"
	"strings"

	"go.yaml.in/yaml/v3"
)

// Circuit is one load or feeder on the bus (an incomer, a drive): its
// own current channels, measured against the shared bus voltage channels.
type Circuit struct {
	Name     string   // unique; topic-safe like a channel name; the record key circuits.<name>
	Currents []string // names of its current channels; every current belongs to one circuit
	ILA      float64  // il_a of this circuit (maximum demand load current, A); 0 = the top-level il_a
	Line     int      // line of the entry in the config file
	Level    string   // Name sanitized as an MQTT topic level
}

// maxCircuits bounds the list (common practice, no source: more drives
// than one gateway's ADC has inputs for).
const maxCircuits = 16

func (d *decoder) circuits(n *yaml.Node, path string, dst *[]Circuit) *Error {
	return d.sequence(n, path, "circuits", maxCircuits, func(_ int, v *yaml.Node, ip string) *Error {
		c := Circuit{Line: v.Line}
		e := d.mapping(v, ip, "circuits[]", func(k string, v *yaml.Node, p string) *Error {
			switch k {
			case "name":
				return d.str(v, p, &c.Name)
			case "il_a":
				return d.float(v, p, &c.ILA)
			case "currents":
				return d.sequence(v, p, "current channel names", maxChannels, func(_ int, v *yaml.Node, ip string) *Error {
					var s string
					if e := d.str(v, ip, &s); e != nil {
						return e
					}
					c.Currents = append(c.Currents, s)
					return nil
				})
			}
			return d.errf(v, p, "internal: key has no decoder")
		})
		if e != nil {
			return e
		}
		*dst = append(*dst, c)
		return nil
	})
}

// circuitsCheck validates circuits: names unique and topic-safe, every
// listed channel a configured current in one circuit only, every current
// in a circuit, no two currents of one circuit on one phase, and the
// wiring's rules per circuit.
func (v *validator) circuitsCheck() *Error {
	c := v.c
	if len(c.Circuits) == 0 {
		return nil
	}
	owner := map[string]int{}
	names := map[string]int{}
	levels := map[string]int{}
	for i := range c.Circuits {
		ci := &c.Circuits[i]
		p := fmt.Sprintf("circuits[%d]", i)
		switch {
		case !v.has(p + ".name"):
			return v.fail(p+".name", "required: a unique name such as incomer or drive1")
		case strings.IndexFunc(ci.Name, func(r rune) bool { return r == ',' || r == '.' || r == ' ' }) >= 0:
			return v.fail(p+".name", "%q must not contain commas, dots or spaces (it becomes a CSV column prefix)", ci.Name)
		case len(ci.Currents) == 0:
			return v.fail(p+".currents", "required: the names of the circuit's current channels, such as [i1a, i1b, i1c]")
		case ci.ILA < 0:
			return v.fail(p+".il_a", "must not be negative (0 = the top-level il_a)")
		}
		if j, dup := names[ci.Name]; dup {
			return v.fail(p+".name", "%q is used twice (first at line %d)", ci.Name, c.Circuits[j].Line)
		}
		names[ci.Name] = i
		var e *Error
		if ci.Level, e = v.level(p+".name", ci.Name); e != nil {
			return e
		}
		if j, dup := levels[ci.Level]; dup {
			return v.fail(p+".name", "%q and %q both become the topic level %q; rename one", ci.Name, c.Circuits[j].Name, ci.Level)
		}
		levels[ci.Level] = i
		phases := map[string]string{}
		var currents [3]int
		for k, name := range ci.Currents {
			kp := fmt.Sprintf("%s.currents[%d]", p, k)
			x := c.ChannelIndex(name)
			switch {
			case x < 0:
				return v.fail(kp, "%q is not a configured channel", name)
			case c.Channels[x].Kind != KindCurrent:
				return v.fail(kp, "%s is a %s channel; a circuit lists current channels (the bus voltages are shared)", name, c.Channels[x].Kind)
			}
			if j, dup := owner[name]; dup {
				return v.fail(kp, "%s already belongs to circuit %s (line %d); a CT measures one circuit", name, c.Circuits[j].Name, c.Circuits[j].Line)
			}
			owner[name] = i
			ph := c.Channels[x].Phase
			if other, dup := phases[ph]; dup {
				return v.fail(kp, "%s and %s are both on phase %s of circuit %s; one current per phase", other, name, ph, ci.Name)
			}
			phases[ph] = name
			if ph != "n" {
				currents[ph[0]-'a'] = x + 1
			}
		}
		if c.Wiring == WiringDelta {
			if e := v.deltaHookup(v.deltaLines(), currents); e != nil {
				return v.fail(p+".currents", "circuit %s: %s", ci.Name, e.Msg)
			}
		}
	}
	for i, ch := range c.Channels {
		if _, ok := owner[ch.Name]; ch.Kind == KindCurrent && !ok {
			return v.fail(fmt.Sprintf("channels[%d].name", i), "current %s is in no circuit; with circuits, list every current channel in one", ch.Name)
		}
	}
	return nil
}

// deltaLines returns index+1 of the voltage channel per line ab, bc, ca.
func (v *validator) deltaLines() [3]int {
	var lines [3]int
	for i, ch := range v.c.Channels {
		if ch.Kind == KindVoltage && len(ch.Phase) == 2 {
			lines[strings.Index("abbcca", lineName(ch.Phase))/2] = i + 1
		}
	}
	return lines
}

// ChannelIL returns the IL that is the base of a current channel's TDD:
// its circuit's il_a, else the top-level il_a.
func (c *Config) ChannelIL(name string) float64 {
	for _, ci := range c.Circuits {
		if ci.ILA > 0 && slices.Contains(ci.Currents, name) {
			return ci.ILA
		}
	}
	return c.ILA
}

// alarmCircuit checks a pf/dpf rule's circuit key: required with circuits,
// naming one of them; not allowed without.
func (v *validator) alarmCircuit(p string, a *Alarm) *Error {
	c := v.c
	switch {
	case len(c.Circuits) == 0 && v.has(p+".circuit"):
		return v.fail(p+".circuit", "there are no circuits; remove the key, or add circuits")
	case len(c.Circuits) == 0:
		return nil
	case !v.has(p + ".circuit"):
		return v.fail(p+".circuit", "required with circuits: the circuit whose %s is watched (%s)", a.Metric, v.circuitNames())
	case !slices.ContainsFunc(c.Circuits, func(x Circuit) bool { return x.Name == a.Circuit }):
		return v.fail(p+".circuit", "no circuit is named %q (%s)", a.Circuit, v.circuitNames())
	}
	return nil
}

func (v *validator) circuitNames() string {
	var s []string
	for _, x := range v.c.Circuits {
		s = append(s, x.Name)
	}
	return "circuits: " + strings.Join(s, ", ")
}

// circuitPhase checks a pf/dpf rule's phase within its circuit: a phase
// needs one of the circuit's currents (and, on wye, its voltage).
func (v *validator) circuitPhase(p string, a *Alarm) *Error {
	c := v.c
	k := slices.IndexFunc(c.Circuits, func(x Circuit) bool { return x.Name == a.Circuit })
	if a.Phase == "total" {
		return nil
	}
	if c.Wiring == WiringDelta {
		return v.fail(p+".phase", "delta has no per-phase %s (no phase-to-neutral voltages); use phase: total", a.Metric)
	}
	for _, name := range c.Circuits[k].Currents {
		if c.Channels[c.ChannelIndex(name)].Phase == a.Phase {
			return nil
		}
	}
	return v.fail(p+".phase", "circuit %s has no current on phase %s, so no %s", a.Circuit, a.Phase, a.Metric)
}

// summaryCircuits checks mqtt.summary_circuits: only with circuits, each
// name a circuit, none twice.
func (v *validator) summaryCircuits() *Error {
	c := v.c
	if !v.has("mqtt.summary_circuits") {
		return nil
	}
	if len(c.Circuits) == 0 {
		return v.fail("mqtt.summary_circuits", "there are no circuits; remove the key, or add circuits")
	}
	for i, name := range c.MQTT.SummaryCircuits {
		p := fmt.Sprintf("mqtt.summary_circuits[%d]", i)
		if !slices.ContainsFunc(c.Circuits, func(x Circuit) bool { return x.Name == name }) {
			return v.fail(p, "no circuit is named %q (%s)", name, v.circuitNames())
		}
		if slices.Index(c.MQTT.SummaryCircuits, name) < i {
			return v.fail(p, "%q is listed twice", name)
		}
	}
	return nil
}
