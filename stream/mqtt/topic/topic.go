package topic

// Status returns the retained status topic "<base>/status".
func Status(base string) string { return base + "/status" }

// Telemetry returns "<base>/telemetry/<interval>", interval being a label
// such as "10min".
func Telemetry(base, interval string) string { return base + "/telemetry/" + interval }

// Alarm returns "<base>/alarm", one message per alarm transition.
func Alarm(base string) string { return base + "/alarm" }

// Health returns "<base>/health", the gateway's own state with every
// 10 min value.
func Health(base string) string { return base + "/health" }

// Event returns "<base>/event".
func Event(base string) string { return base + "/event" }
