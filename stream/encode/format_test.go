package encode

import (
	"testing"
	"time"
)

func TestFormatTime(t *testing.T) {
	t.Parallel()
	cases := []struct {
		in   time.Time
		want string
		src  string
	}{
		{time.Date(2026, 3, 1, 10, 0, 0, 0, time.UTC), "2026-03-01T10:00:00.000000Z", "DESIGN Time example"},
		{time.Date(2026, 3, 1, 11, 0, 0, 0, time.FixedZone("CET", 3600)), "2026-03-01T10:00:00.000000Z", "RFC 3339 section 5.6, converted to UTC (DESIGN Time)"},
		{time.Date(2026, 3, 1, 10, 0, 0, 123456789, time.UTC), "2026-03-01T10:00:00.123456Z", "time.Format truncates fractional seconds (Go time package doc)"},
		{time.Unix(0, 0), "1970-01-01T00:00:00.000000Z", "DESIGN: replay default base time"},
		{time.Unix(0, 0).Add(2048 * time.Second / 10240), "1970-01-01T00:00:00.200000Z", "2048 samples at 10240 Hz = 0.2 s (arithmetic)"},
	}
	for _, tc := range cases {
		got := FormatTime(tc.in)
		if got != tc.want {
			t.Errorf("FormatTime(%v) = %s, want %s (src: %s)", tc.in, got, tc.want, tc.src)
		}
		back, err := time.Parse(time.RFC3339Nano, got)
		if err != nil || !back.Equal(tc.in.Truncate(time.Microsecond)) {
			t.Errorf("%s does not parse back as RFC 3339 to %v: %v, %v", got, tc.in, back, err)
		}
	}
}

func TestParseFormat(t *testing.T) {
	t.Parallel()
	for _, n := range FormatNames() {
		f, ok := ParseFormat(n)
		if !ok || f.String() != n {
			t.Errorf("ParseFormat(%q) = %v, %t", n, f, ok)
		}
	}
	for _, bad := range []string{"", "json", "CSV", "tbl"} {
		if _, ok := ParseFormat(bad); ok {
			t.Errorf("ParseFormat(%q) accepted (src: DESIGN: --format jsonl|csv|table)", bad)
		}
	}
	if Format(0).String() != "invalid" {
		t.Errorf("zero Format prints %q", Format(0).String())
	}
}
