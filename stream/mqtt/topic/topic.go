package topic

// Status returns the retained status topic "<base>/status".
func Status(base string) string { return base + "/status" }

// Telemetry returns "<base>/telemetry/<interval>", interval being a label
// such as "10min".
func Telemetry(base, interval string) string { return base + "/telemetry/" + interval }

// Summary returns "<base>/summary/<interval>", the retained slim summary
// of each record of that level.
func Summary(base, interval string) string { return base + "/summary/" + interval }

// Energy returns "<base>/energy", the energy registers per circuit.
func Energy(base string) string { return base + "/energy" }

// Diagnostics returns "<base>/diagnostics", each 10 min record's current
// harmonic powers and directions.
func Diagnostics(base string) string { return base + "/diagnostics" }

// Alarm returns "<base>/alarm", one message per alarm transition.
func Alarm(base string) string { return base + "/alarm" }

// Health returns "<base>/health", the gateway's own state with every
// 10 min value.
func Health(base string) string { return base + "/health" }

// Event returns "<base>/event".
func Event(base string) string { return base + "/event" }
