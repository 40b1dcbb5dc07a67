package config

import (
	"fmt"
	"strings"
	"unicode"
	"unicode/utf8"
)

// maxLevelBytes bounds one topic level. MQTT allows 65,535 bytes for a whole
// topic (MQTT 3.1.1 §1.5.3); a name longer than this is surely a mistake
// (common practice, no source).
const maxLevelBytes = 128

// sanitize turns a name (site, gateway, channel, circuit) into an MQTT
// topic level: '+', '#' and '/' become '_', and so does a leading '$' (MQTT
// 3.1.1 §4.7.1–4.7.2: wildcards, level separators and broker-reserved
// topics). It returns the level, or why there is none: an empty name,
// invalid UTF-8, control characters (MQTT 3.1.1 §1.5.3) or a name over
// maxLevelBytes. Distinct names can sanitize to the same level; Parse
// reports such collisions.
func sanitize(level string) (string, string) {
	switch {
	case level == "":
		return "", "must not be empty"
	case !utf8.ValidString(level):
		return "", "is not valid UTF-8"
	case len(level) > maxLevelBytes:
		return "", fmt.Sprintf("is longer than %d bytes", maxLevelBytes)
	}
	var b strings.Builder
	b.Grow(len(level))
	for i, r := range level {
		switch {
		case unicode.IsControl(r):
			return "", fmt.Sprintf("contains the control character U+%04X", r)
		case r == '+' || r == '#' || r == '/' || (i == 0 && r == '$'):
			b.WriteByte('_')
		default:
			b.WriteRune(r)
		}
	}
	return b.String(), ""
}
