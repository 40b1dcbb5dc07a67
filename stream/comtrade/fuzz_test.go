package comtrade

import (
	"bytes"
	"errors"
	"testing"
)

// FuzzParseConfig: any bytes parse or fail with an *Error wrapping
// ErrConfig; nothing panics. Seeds: testdata/fuzz/FuzzParseConfig and the
// revisions below.
func FuzzParseConfig(f *testing.F) {
	f.Add([]byte(cfg1999))
	f.Add([]byte(cfgFor(Float32, 5)))
	f.Add([]byte("a,b\n0,0A,0D\n50\n0\n0,1\n01/01/2000,00:00:00\n01/01/2000,00:00:00\nASCII\n"))
	f.Fuzz(func(t *testing.T, data []byte) {
		c, err := ParseConfig("fuzz.cfg", data)
		if err != nil {
			var e *Error
			if !errors.As(err, &e) || !errors.Is(err, ErrConfig) {
				t.Fatalf("error %v is not a *Error wrapping ErrConfig", err)
			}
			return
		}
		if len(c.Rates) == 0 || c.Samples() == 0 {
			t.Fatalf("parsed without rates: %+v", c)
		}
	})
}

// FuzzDat: any .dat bytes for a fixed .cfg of each type end with io.EOF or
// an error, never a panic, and deliver no more samples than declared.
func FuzzDat(f *testing.F) {
	f.Add(encodeDat(ASCII, []record{{0, []float64{1, 2}, 0}}), uint8(0))
	f.Add(encodeDat(Binary, []record{{0, []float64{1, 2}, 0}, {98, []float64{3, 4}, 1}}), uint8(1))
	f.Add([]byte("1,0,,5,1\n\x1a"), uint8(0))
	types := []string{ASCII, Binary, Binary32, Float32}
	f.Fuzz(func(t *testing.T, data []byte, kind uint8) {
		c, err := ParseConfig("rec.cfg", []byte(cfgFor(types[int(kind)%4], 50)))
		if err != nil {
			t.Fatal(err)
		}
		d, err := NewReader(c, "rec.dat", bytes.NewReader(data), []int{0, 1})
		if err != nil {
			t.Fatal(err)
		}
		dst := make([]float64, 14)
		total := 0
		for i := 0; ; i++ {
			if i > len(data)+60 {
				t.Fatal("no end")
			}
			n, err := d.ReadFrames(dst)
			total += n
			if err != nil {
				break
			}
		}
		if total > 50 {
			t.Fatalf("%d samples, the .cfg declares 50", total)
		}
	})
}
