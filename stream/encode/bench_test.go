package encode

import (
	"io"
	"testing"
)

// BenchmarkWrite measures one record of the North Weir-style wye setup
// (seven channels, all 50 orders, IL set) per format.
func BenchmarkWrite(b *testing.B) {
	s := buildSetup(b, specWyeAll)
	r := newRecord(s, randFloats(5))
	for name, w := range map[string]Writer{
		"jsonl": NewJSONL(io.Discard, s),
		"csv":   NewCSV(io.Discard, s),
		"table": NewTable(io.Discard, s, TableOptions{}),
	} {
		b.Run(name, func(b *testing.B) {
			b.ReportAllocs()
			var err error
			for b.Loop() {
				err = w.Write(r)
			}
			if err != nil {
				b.Fatal(err)
			}
		})
	}
}

func BenchmarkAppendJSON(b *testing.B) {
	s := buildSetup(b, specWyeAll)
	r := newRecord(s, randFloats(5))
	buf := AppendJSON(nil, s, r)
	b.SetBytes(int64(len(buf)))
	b.ReportAllocs()
	for b.Loop() {
		buf = AppendJSON(buf[:0], s, r)
	}
	if len(buf) == 0 {
		b.Fatal("empty output")
	}
}
