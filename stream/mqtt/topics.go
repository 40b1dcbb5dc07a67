package mqtt

import (
	"strconv"
	"strings"
	"unicode/utf8"
)

// publishable reports whether topic can be the topic of a PUBLISH packet
// (MQTT 3.1.1 §4.7: no wildcards, not empty, at most 65535 bytes of UTF-8
// without U+0000).
func publishable(topic string) bool {
	return topic != "" && len(topic) <= 65535 && utf8.ValidString(topic) &&
		!strings.ContainsAny(topic, "+#\x00")
}

// validBase reports whether base is a usable topic base: publishable, no
// empty level, no leading '$'.
func validBase(base string) bool {
	if !publishable(base) || strings.HasPrefix(base, "$") {
		return false
	}
	for l := range strings.SplitSeq(base, "/") {
		if l == "" {
			return false
		}
	}
	return true
}

// WithSeq returns payload with "seq":seq inserted as the first key when
// payload is a JSON object (first non-space byte '{', last '}'):
// `{"a":1}` becomes `{"seq":12,"a":1}` and `{}` becomes `{"seq":12}`. Any
// other payload, and an object whose first key already is "seq", is
// returned unchanged. The object is not otherwise validated. payload is
// never modified; the result is a new slice unless unchanged.
func WithSeq(payload []byte, seq uint64) []byte {
	i, j := 0, len(payload)
	for i < j && isSpace(payload[i]) {
		i++
	}
	for j > i && isSpace(payload[j-1]) {
		j--
	}
	if j-i < 2 || payload[i] != '{' || payload[j-1] != '}' {
		return payload
	}
	k := i + 1
	for k < j && isSpace(payload[k]) {
		k++
	}
	const key = `"seq"`
	if strings.HasPrefix(string(payload[k:j]), key) {
		r := k + len(key)
		for r < j && isSpace(payload[r]) {
			r++
		}
		if r < j && payload[r] == ':' {
			return payload
		}
	}
	out := make([]byte, 0, len(payload)+28)
	out = append(out, payload[:i+1]...)
	out = append(out, `"seq":`...)
	out = strconv.AppendUint(out, seq, 10)
	if k < j-1 { // the object has members
		out = append(out, ',')
	}
	return append(out, payload[i+1:]...)
}

// isSpace reports JSON insignificant whitespace (RFC 8259 §2).
func isSpace(c byte) bool { return c == ' ' || c == '\t' || c == '\n' || c == '\r' }
