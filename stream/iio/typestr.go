package iio

import (
	"encoding/binary"
	"fmt"
	"strconv"
	"strings"
)

// Type is a parsed scan element type string (kernel ABI, sysfs-bus-iio:
// "[be|le]:[s|u]bits/storagebits[Xrepeat]>>shift").
type Type struct {
	BigEndian bool
	Signed    bool
	Bits      int // significant bits
	Storage   int // storage bits: 8, 16, 32 or 64
	Repeat    int // 1 unless the string carries Xrepeat
	Shift     int // right shift before masking
}

// ParseType parses a type string such as "le:s12/16>>4" or "be:u16/16X2>>0".
func ParseType(s string) (Type, error) {
	s = strings.TrimSpace(s)
	bad := func(why string) (Type, error) {
		return Type{}, fmt.Errorf("type %q: %s (want [be|le]:[s|u]bits/storagebits[Xrepeat]>>shift)", s, why)
	}
	end, rest, ok := strings.Cut(s, ":")
	t := Type{Repeat: 1}
	switch end {
	case "be":
		t.BigEndian = true
	case "le":
	default:
		return bad("endianness must be be or le")
	}
	if !ok || rest == "" {
		return bad("no sign and sizes")
	}
	switch rest[0] {
	case 's', 'S':
		t.Signed = true
	case 'u', 'U':
	default:
		return bad("sign must be s or u")
	}
	rest = rest[1:]
	sizes, shift, ok := strings.Cut(rest, ">>")
	if !ok {
		return bad("no >>shift")
	}
	var err error
	if t.Shift, err = strconv.Atoi(shift); err != nil || t.Shift < 0 {
		return bad("shift is not a whole number")
	}
	if b, r, ok := strings.Cut(sizes, "X"); ok {
		sizes = b
		if t.Repeat, err = strconv.Atoi(r); err != nil || t.Repeat < 1 || t.Repeat > 1024 {
			return bad("repeat must be 1 to 1024")
		}
	}
	bits, storage, ok := strings.Cut(sizes, "/")
	if !ok {
		return bad("no bits/storagebits")
	}
	if t.Bits, err = strconv.Atoi(bits); err != nil {
		return bad("bits is not a whole number")
	}
	if t.Storage, err = strconv.Atoi(storage); err != nil {
		return bad("storagebits is not a whole number")
	}
	switch {
	case t.Storage != 8 && t.Storage != 16 && t.Storage != 32 && t.Storage != 64:
		return bad("storagebits must be 8, 16, 32 or 64")
	case t.Bits < 1 || t.Bits > t.Storage:
		return bad("bits must be 1 to storagebits")
	case t.Shift+t.Bits > t.Storage:
		return bad("shift + bits exceed storagebits")
	}
	return t, nil
}

// String formats t as the kernel does.
func (t Type) String() string {
	e, sg := "le", 'u'
	if t.BigEndian {
		e = "be"
	}
	if t.Signed {
		sg = 's'
	}
	if t.Repeat > 1 {
		return fmt.Sprintf("%s:%c%d/%dX%d>>%d", e, sg, t.Bits, t.Storage, t.Repeat, t.Shift)
	}
	return fmt.Sprintf("%s:%c%d/%d>>%d", e, sg, t.Bits, t.Storage, t.Shift)
}

// Bytes returns the element's size in a scan: storage bytes × repeat.
func (t Type) Bytes() int { return t.Storage / 8 * t.Repeat }

// Value decodes the first value of the element at b (Storage/8 bytes):
// read in its byte order, shifted right by Shift, masked to Bits and
// sign-extended when Signed.
func (t Type) Value(b []byte) int64 {
	var u uint64
	var o binary.ByteOrder = binary.LittleEndian
	if t.BigEndian {
		o = binary.BigEndian
	}
	switch t.Storage {
	case 8:
		u = uint64(b[0])
	case 16:
		u = uint64(o.Uint16(b))
	case 32:
		u = uint64(o.Uint32(b))
	default:
		u = o.Uint64(b)
	}
	u >>= uint(t.Shift)
	if t.Bits < 64 {
		u &= 1<<uint(t.Bits) - 1
		if t.Signed && u&(1<<uint(t.Bits-1)) != 0 {
			u |= ^uint64(0) << uint(t.Bits)
		}
	}
	return int64(u)
}

// Element is one enabled scan element and its place in a scan.
type Element struct {
	Name   string // e.g. "in_voltage0", "in_timestamp"
	Index  int
	Type   Type
	Offset int // bytes from the start of the scan
}

// Layout places elements (sorted by index) as the kernel does: each at the
// next multiple of its own size (storage bytes × repeat, or the storage
// bytes when that product is not a power of two), the scan padded to a
// multiple of the largest. It returns the scan size in bytes.
func Layout(els []Element) int {
	off, largest := 0, 1
	for i := range els {
		n := els[i].Type.Bytes()
		a := n
		if a&(a-1) != 0 {
			a = els[i].Type.Storage / 8
		}
		off = (off + a - 1) / a * a
		els[i].Offset = off
		off += n
		largest = max(largest, a)
	}
	return (off + largest - 1) / largest * largest
}
