package pcm

import (
	"math"
	"testing"
)

// TestDecode: each format's byte patterns at the edges of its range.
func TestDecode(t *testing.T) {
	cases := []struct {
		name string
		f    Format
		b    []byte
		want []float64
		src  string
	}{
		{"s16 extremes", S16LE, []byte{0x00, 0x80, 0xFF, 0x7F, 0xFF, 0xFF, 0x01, 0x00}, []float64{-32768, 32767, -1, 1},
			"two's complement, 16 bits, least significant byte first"},
		{"s24 extremes", S24LE, []byte{0x00, 0x00, 0x80, 0xFF, 0xFF, 0x7F, 0xFF, 0xFF, 0xFF, 0x56, 0x34, 0x12}, []float64{-8388608, 8388607, -1, 0x123456},
			"two's complement, 24 bits in 3 bytes, least significant first"},
		{"s32 extremes", S32LE, []byte{0, 0, 0, 0x80, 0xFF, 0xFF, 0xFF, 0x7F}, []float64{math.MinInt32, math.MaxInt32},
			"two's complement, 32 bits"},
		{"f32 values", F32LE, []byte{0x00, 0x00, 0x80, 0x3F, 0x00, 0x00, 0x20, 0xC1}, []float64{1, -10},
			"IEEE 754 binary32: 0x3F800000 = 1.0, 0xC1200000 = -10.0"},
	}
	for _, tc := range cases {
		t.Run(tc.name, func(t *testing.T) {
			got := make([]float64, len(tc.want))
			tc.f.Decode(got, tc.b)
			for i := range got {
				if got[i] != tc.want[i] {
					t.Errorf("value %d = %v, want %v (%s)", i, got[i], tc.want[i], tc.src)
				}
			}
			b := make([]byte, len(tc.b))
			tc.f.Encode(b, tc.want)
			if string(b) != string(tc.b) {
				t.Errorf("Encode = % X, want % X", b, tc.b)
			}
		})
	}
}

// TestParseFormat: the four spellings, nothing else.
func TestParseFormat(t *testing.T) {
	for _, n := range FormatNames() {
		f, ok := ParseFormat(n)
		if !ok || f.String() != n || !f.Valid() {
			t.Errorf("ParseFormat(%q) = %v %v", n, f, ok)
		}
	}
	for _, n := range []string{"", "S16LE", "s16be", "u8", "f64le"} {
		if _, ok := ParseFormat(n); ok {
			t.Errorf("ParseFormat(%q) accepted", n)
		}
	}
}
