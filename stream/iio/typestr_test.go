package iio

import (
	"strings"
	"testing"
)

// TestParseType: the type-string forms of the kernel ABI (sysfs-bus-iio,
// scan_elements/*_type: [be|le]:[s|u]bits/storagebits[Xrepeat]>>shift) and
// the values they decode.
func TestParseType(t *testing.T) {
	cases := []struct {
		s     string
		want  Type
		bytes []byte
		value int64
		src   string
	}{
		{"le:s12/16>>4", Type{false, true, 12, 16, 1, 4}, []byte{0xF0, 0xFF}, -1, "12-bit two's complement left-justified in 16: 0xFFF0>>4 = 0xFFF = -1"},
		{"be:u16/16>>0", Type{true, false, 16, 16, 1, 0}, []byte{0x12, 0x34}, 0x1234, "big-endian unsigned"},
		{"be:s24/32>>8", Type{true, true, 24, 32, 1, 8}, []byte{0x80, 0x00, 0x00, 0xAA}, -8388608, "24 bits in 32, shifted: most negative"},
		{"le:s24/32>>0", Type{false, true, 24, 32, 1, 0}, []byte{0xFF, 0xFF, 0x7F, 0x55}, 8388607, "24 bits in the low bytes; the top byte is not part of it"},
		{"le:s64/64>>0", Type{false, true, 64, 64, 1, 0}, []byte{0xFE, 0xFF, 0xFF, 0xFF, 0xFF, 0xFF, 0xFF, 0xFF}, -2, "64-bit timestamp form"},
		{"le:u10/16X2>>6", Type{false, false, 10, 16, 2, 6}, []byte{0xC0, 0xFF, 0, 0}, 1023, "repeat 2, first value"},
		{"le:u8/8>>0", Type{false, false, 8, 8, 1, 0}, []byte{0xFF}, 255, "8-bit unsigned"},
		{"be:s14/16>>2", Type{true, true, 14, 16, 1, 2}, []byte{0x7F, 0xFC}, 8191, "14-bit positive full scale"},
	}
	for _, tc := range cases {
		got, err := ParseType(tc.s)
		if err != nil || got != tc.want {
			t.Errorf("ParseType(%q) = %+v, %v; want %+v", tc.s, got, err, tc.want)
			continue
		}
		if got.String() != tc.s {
			t.Errorf("String() = %q, want %q", got.String(), tc.s)
		}
		if v := got.Value(tc.bytes); v != tc.value {
			t.Errorf("%s: value %d, want %d (%s)", tc.s, v, tc.value, tc.src)
		}
	}
	for _, bad := range []struct{ s, why string }{
		{"xe:s12/16>>4", "endianness"}, {"le:q12/16>>4", "sign"}, {"le:s17/16>>0", "bits must be 1 to storagebits"},
		{"le:s12/24>>0", "storagebits must be 8, 16, 32 or 64"}, {"le:s12/16", "no >>shift"}, {"le:s12/16>>5", "shift + bits"},
		{"le:s12/16X0>>0", "repeat"}, {"", "endianness"}, {"le:", "no sign"}, {"le:s12>>0", "no bits/storagebits"},
	} {
		if _, err := ParseType(bad.s); err == nil || !strings.Contains(err.Error(), bad.why) {
			t.Errorf("ParseType(%q) = %v, want an error about %s", bad.s, err, bad.why)
		}
	}
}

// TestLayout: elements in index order, each aligned to its own size, the
// scan padded to the largest (kernel ABI; offsets worked out by hand).
func TestLayout(t *testing.T) {
	mk := func(specs ...string) []Element {
		var els []Element
		for i, s := range specs {
			ty, err := ParseType(s)
			if err != nil {
				t.Fatal(err)
			}
			els = append(els, Element{Index: i, Type: ty})
		}
		return els
	}
	cases := []struct {
		name  string
		els   []Element
		offs  []int
		bytes int
	}{
		{"mixed 16/24/32/64 with timestamp", mk("le:s16/16>>0", "le:s24/32>>0", "le:u12/16>>4", "le:s64/64>>0"), []int{0, 4, 8, 16}, 24},
		{"u8 then s16", mk("le:u8/8>>0", "be:s16/16>>0"), []int{0, 2}, 4},
		{"s32 then u8: padded to 8", mk("le:s32/32>>0", "le:u8/8>>0"), []int{0, 4}, 8},
		{"three s16: padded to 6", mk("le:s16/16>>0", "le:s16/16>>0", "le:s16/16>>0"), []int{0, 2, 4}, 6},
		{"repeat 2 of s16 after u8", mk("le:u8/8>>0", "le:s16/16X2>>0"), []int{0, 4}, 8},
	}
	for _, tc := range cases {
		n := Layout(tc.els)
		for i, e := range tc.els {
			if e.Offset != tc.offs[i] {
				t.Errorf("%s: element %d at %d, want %d", tc.name, i, e.Offset, tc.offs[i])
			}
		}
		if n != tc.bytes {
			t.Errorf("%s: scan %d bytes, want %d", tc.name, n, tc.bytes)
		}
	}
}

// FuzzParseType: any string parses or fails, never panics; what parses
// prints back as itself (up to the sign's case) and decodes its bytes.
func FuzzParseType(f *testing.F) {
	for _, s := range []string{"le:s12/16>>4", "be:u16/16X4>>0", "le:s64/64>>0", "be:s24/32>>8"} {
		f.Add(s)
	}
	f.Fuzz(func(t *testing.T, s string) {
		ty, err := ParseType(s)
		if err != nil {
			return
		}
		if _, err := ParseType(ty.String()); err != nil {
			t.Fatalf("%q parsed, but its String %q does not: %v", s, ty.String(), err)
		}
		_ = ty.Value(make([]byte, 8))
	})
}
