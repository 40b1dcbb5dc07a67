package encode

import (
	"math"
	"strconv"
	"unicode/utf8"
)

// finite reports whether v can be printed as a number: NaN is the null
// marker (metrics.Null) and ±Inf never reaches the output either.
func finite(v float64) bool { return !math.IsNaN(v) && !math.IsInf(v, 0) }

// appendNum appends v as the shortest decimal that parses back to the same
// float64 (strconv's shortest round-trip, precision −1). It departs from a
// plain 'g' verb in where it switches to exponent form: like encoding/json
// (ECMAScript's Number::toString), it prints plain digits for
// 1e-6 ≤ |v| < 1e21, so a 1.2 MW total reads 1200000 rather than 1.2e+06,
// and it writes e-7 rather than e-07. Both forms are valid JSON and round-trip
// exactly; this one also matches what encoding/json prints elsewhere in the
// project. v must be finite.
func appendNum(dst []byte, v float64) []byte {
	verb := byte('f')
	if a := math.Abs(v); a != 0 && (a < 1e-6 || a >= 1e21) {
		verb = 'e'
	}
	dst = strconv.AppendFloat(dst, v, verb, -1, 64)
	if verb == 'e' {
		// strconv writes at least two exponent digits: e-07 → e-7. Positive
		// exponents here are 21 or more and have no leading zero.
		n := len(dst)
		if n >= 4 && dst[n-4] == 'e' && dst[n-3] == '-' && dst[n-2] == '0' {
			dst[n-2] = dst[n-1]
			dst = dst[:n-1]
		}
	}
	return dst
}

// appendJSONNum appends v, or null when v is NaN or ±Inf.
func appendJSONNum(dst []byte, v float64) []byte {
	if !finite(v) {
		return append(dst, "null"...)
	}
	return appendNum(dst, v)
}

const hexDigits = "0123456789abcdef"

// appendJSONString appends s as a JSON string (RFC 8259 section 7): quote,
// backslash and control characters are escaped, U+2028 and U+2029 too (as
// encoding/json does, for JavaScript consumers), and invalid UTF-8 becomes
// U+FFFD. HTML characters are left as they are.
func appendJSONString(dst []byte, s string) []byte {
	dst = append(dst, '"')
	start := 0
	for i := 0; i < len(s); {
		c := s[i]
		if c < utf8.RuneSelf {
			if c >= 0x20 && c != '"' && c != '\\' {
				i++
				continue
			}
			dst = append(dst, s[start:i]...)
			switch c {
			case '"', '\\':
				dst = append(dst, '\\', c)
			case '\n':
				dst = append(dst, '\\', 'n')
			case '\r':
				dst = append(dst, '\\', 'r')
			case '\t':
				dst = append(dst, '\\', 't')
			default:
				dst = append(dst, '\\', 'u', '0', '0', hexDigits[c>>4], hexDigits[c&0xf])
			}
			i++
			start = i
			continue
		}
		r, size := utf8.DecodeRuneInString(s[i:])
		if r == utf8.RuneError && size == 1 {
			dst = append(dst, s[start:i]...)
			dst = append(dst, `\ufffd`...)
			i += size
			start = i
			continue
		}
		if r == '\u2028' || r == '\u2029' {
			dst = append(dst, s[start:i]...)
			dst = append(dst, '\\', 'u', '2', '0', '2', hexDigits[r&0xf])
			i += size
			start = i
			continue
		}
		i += size
	}
	dst = append(dst, s[start:]...)
	return append(dst, '"')
}

// AppendString appends s as a JSON string (encoding/json's escaping, HTML
// escaping off), for payload builders elsewhere in the project.
func AppendString(dst []byte, s string) []byte { return appendJSONString(dst, s) }

// AppendNumber appends v as the shortest round-trip JSON number, or null
// when v is NaN or ±Inf.
func AppendNumber(dst []byte, v float64) []byte { return appendJSONNum(dst, v) }
