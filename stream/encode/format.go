package encode

import (
	"fmt"
	"io"
	"strings"
	"time"

	"github.com/gridloupe/gridloupe/metrics"
)

// Writer is what every encoder in this package offers, so the command line
// can pick one by Format. Constructors return the concrete types.
type Writer interface {
	Write(r *metrics.Record) error
	Flush() error
}

var (
	_ Writer = (*JSONL)(nil)
	_ Writer = (*CSV)(nil)
	_ Writer = (*Table)(nil)
	_ Writer = (*Blocks)(nil)
)

// New returns the writer of format f (the table formats take opts).
func New(f Format, w io.Writer, s *metrics.Setup, opts TableOptions) (Writer, error) {
	switch f {
	case FormatJSONL:
		return NewJSONL(w, s), nil
	case FormatCSV:
		return NewCSV(w, s), nil
	case FormatTable:
		return NewBlocks(w, s, opts), nil
	case FormatWide:
		return NewTable(w, s, opts), nil
	}
	return nil, fmt.Errorf("encode: format %d: allowed are %s", f, strings.Join(FormatNames(), ", "))
}

// Format is an output format of `gridloupe replay`.
type Format uint8

// Output formats.
const (
	FormatJSONL Format = iota + 1
	FormatCSV
	FormatTable // per-phase blocks for a terminal (Blocks)
	FormatWide  // one wide row per record (Table)
)

var formatNames = [...]string{FormatJSONL: "jsonl", FormatCSV: "csv", FormatTable: "table", FormatWide: "wide"}

// String returns the format's command-line spelling.
func (f Format) String() string {
	if f > 0 && int(f) < len(formatNames) {
		return formatNames[f]
	}
	return "invalid"
}

// ParseFormat parses "jsonl", "csv", "table" or "wide".
func ParseFormat(s string) (Format, bool) {
	for i, n := range formatNames {
		if i > 0 && n == s {
			return Format(i), true
		}
	}
	return 0, false
}

// FormatNames lists the valid format spellings, for help and error texts.
func FormatNames() []string { return []string{"jsonl", "csv", "table", "wide"} }

// timeLayout is RFC 3339 in UTC with exactly six fractional digits (DESIGN
// "Time"). The trailing Z is a literal: the time is converted to UTC first.
const timeLayout = TimeLayout

// TimeLayout is the record schema's time format (DESIGN "Time"): RFC 3339
// in UTC with microseconds. Every JSON time gridloupe writes uses it.
const TimeLayout = "2006-01-02T15:04:05.000000Z"

// tableTimeLayout is the table's start column, to the millisecond.
const tableTimeLayout = "2006-01-02T15:04:05.000Z"

// FormatTime prints t as RFC 3339 in UTC with microseconds, for example
// 2026-03-01T10:00:00.000000Z. Sub-microsecond digits are truncated, as
// time.Format does.
func FormatTime(t time.Time) string { return string(AppendTime(nil, t)) }

// AppendTime appends FormatTime(t) to dst without allocating when dst has
// room.
func AppendTime(dst []byte, t time.Time) []byte {
	return t.UTC().AppendFormat(dst, timeLayout)
}
