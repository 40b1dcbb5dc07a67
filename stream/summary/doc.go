// Package summary builds the slim summary of one aggregate that a building
// management system trends: frequency, per-phase and total voltage,
// current, P, Q1, PF, DPF, voltage THD and current TDD (orders 2–50 when
// computed), unbalance, the interval's end and the lead/lag word; with
// several circuits on one bus, the bus voltages and per circuit its total
// P, Q1, Se, PF, DPF and each phase current's TDD. The
// gateway publishes it retained on <base>/summary/<interval>; the figures
// are the record's own, rounded to a resolution a trend needs, so a message
// stays under 1 KB. The full record stays on <base>/telemetry/<interval>.
package summary
