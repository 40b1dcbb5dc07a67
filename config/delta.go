package config

import (
	"fmt"
	"math"
	"strings"
)

// lineName returns the line (ab, bc or ca) a delta voltage phase such as
// "cb" measures, the orientation aside.
func lineName(phase string) string {
	switch phase {
	case "ab", "ba":
		return "ab"
	case "bc", "cb":
		return "bc"
	}
	return "ca"
}

// deltaChannel checks one channel of `wiring: delta` (DESIGN "Delta
// (three-wire) wiring"): voltages line-to-line, currents on a, b or c.
// lines and currents hold index+1 of the channel per line (ab, bc, ca)
// and per phase.
func (v *validator) deltaChannel(p string, i int, lines, currents *[3]int) *Error {
	ch := &v.c.Channels[i]
	if ch.Kind == KindVoltage {
		if len(ch.Phase) != 2 {
			return v.fail(p+".phase", "delta voltages are line-to-line: ab, bc, ca (or ba, cb, ac, wired the other way round), not %s", ch.Phase)
		}
		l := strings.Index("abbcca", lineName(ch.Phase)) / 2
		if x := lines[l]; x != 0 {
			return v.fail(p+".phase", "a second voltage on line %s (first: %s, line %d); one per line", lineName(ch.Phase), v.c.Channels[x-1].Name, v.c.Channels[x-1].Line)
		}
		lines[l] = i + 1
		return nil
	}
	switch {
	case ch.Phase == "n":
		return v.fail(p+".phase", "a three-wire (delta) system has no neutral; remove the neutral current channel or use wiring: wye")
	case len(ch.Phase) != 1:
		return v.fail(p+".phase", "a current is on phase a, b or c, not %s", ch.Phase)
	}
	ph := int(ch.Phase[0] - 'a')
	if x := currents[ph]; x != 0 && len(v.c.Circuits) > 0 {
		return nil // circuits each have their own phases (circuitsCheck)
	} else if x != 0 {
		return v.fail(p+".phase", "a second current channel on phase %s (first: %s, line %d); one per phase", ch.Phase, v.c.Channels[x-1].Name, v.c.Channels[x-1].Line)
	}
	currents[ph] = i + 1
	return nil
}

// deltaHookup checks the combination: no, two or three currents; two
// currents need the two voltages to the phase without a CT (the
// two-wattmeter hook-up, e.g. ab and cb with CTs on a and c); three need
// two voltages that share a phase.
func (v *validator) deltaHookup(lines, currents [3]int) *Error {
	nl, ni := 0, 0
	for k := range 3 {
		if lines[k] != 0 {
			nl++
		}
		if currents[k] != 0 {
			ni++
		}
	}
	if nl == 0 {
		return v.fail("channels", "no voltage channel; delta needs line-to-line voltages such as {name: vab, kind: voltage, phase: ab}")
	}
	// line m joins phases m and m+1, so phase m lies on lines m and m+2
	onPhase := func(m int) bool { return lines[m] != 0 && lines[(m+2)%3] != 0 }
	switch ni {
	case 0:
		return nil
	case 1:
		for k, x := range currents {
			if x != 0 {
				return v.fail(fmt.Sprintf("channels[%d].phase", x-1), "one current (phase %c) cannot give a three-wire total; fit CTs on two phases (the two-wattmeter hook-up) or on all three", 'a'+k)
			}
		}
	case 2:
		m := 0
		for k, x := range currents {
			if x == 0 {
				m = k
			}
		}
		if !onPhase(m) {
			o1, o2 := (m+1)%3, (m+2)%3
			return v.fail("channels", "two CTs (on %c and %c) need the voltages to the phase without a CT, %c%c and %c%c (the two-wattmeter hook-up); measure those, or fit the third CT",
				'a'+o1, 'a'+o2, 'a'+o1, 'a'+m, 'a'+o2, 'a'+m)
		}
		return nil
	}
	if !onPhase(0) && !onPhase(1) && !onPhase(2) {
		return v.fail("channels", "three CTs need at least two line-to-line voltages (such as ab and cb)")
	}
	return nil
}

// deltaUnbalance: on delta, unbalance needs two voltages (the third
// follows) or two currents.
func (v *validator) deltaUnbalance(p, metric, kind string, chans []Channel, of string) *Error {
	n := 0
	for _, ch := range chans {
		if ch.Kind == kind {
			n++
		}
	}
	if n < 2 {
		return v.fail(p+".metric", "%s needs two or three %s channels on delta%s", metric, kind, of)
	}
	return nil
}

// BusVoltageV returns the line-to-line bus voltage that selects the IEEE
// 519 Table 1 row: √3 times the declared phase-to-neutral voltage for wye,
// the declared line-to-line voltage for delta, the declared voltage for
// single-phase.
func (c *Config) BusVoltageV() float64 {
	if c.Wiring == WiringWye {
		return math.Sqrt(3) * c.Nominal.VoltageV
	}
	return c.Nominal.VoltageV
}
