package metrics

import (
	"math"
	"reflect"
	"testing"
)

// sameBits reports whether a and b hold the same values, floats compared
// by their bits (so NaN nulls match) and the scratch field cin skipped;
// it names the first difference.
func sameBits(a, b reflect.Value, path string) (bool, string) {
	switch a.Kind() {
	case reflect.Float64:
		return math.Float64bits(a.Float()) == math.Float64bits(b.Float()), path
	case reflect.Struct:
		for i := range a.NumField() {
			f := a.Type().Field(i)
			if f.Name == "cin" {
				continue
			}
			if ok, p := sameBits(a.Field(i), b.Field(i), path+"."+f.Name); !ok {
				return false, p
			}
		}
		return true, ""
	case reflect.Slice:
		if a.Len() != b.Len() || a.IsNil() != b.IsNil() {
			return false, path + " (length)"
		}
		for i := range a.Len() {
			if ok, p := sameBits(a.Index(i), b.Index(i), path+"[]"); !ok {
				return false, p
			}
		}
		return true, ""
	case reflect.Pointer:
		if a.IsNil() || b.IsNil() || a.Pointer() == b.Pointer() {
			return a.IsNil() == b.IsNil(), path
		}
		return sameBits(a.Elem(), b.Elem(), path)
	case reflect.String:
		return a.String() == b.String(), path
	case reflect.Bool:
		return a.Bool() == b.Bool(), path
	case reflect.Int, reflect.Int8, reflect.Int16, reflect.Int32, reflect.Int64:
		return a.Int() == b.Int(), path
	case reflect.Uint, reflect.Uint8, reflect.Uint16, reflect.Uint32, reflect.Uint64, reflect.Uintptr:
		return a.Uint() == b.Uint(), path
	}
	return false, path + " (kind " + a.Kind().String() + " not compared)"
}

// copyCase returns a wye setup with one circuit and a computed record:
// channels, harmonics, voltage sequences, nulls and a circuit record to copy.
func copyCase(tb testing.TB) (*Setup, *Record) {
	v := balancedV(230)
	d1 := []wave{sum(cosine(100, 1, -20*deg), cosine(20, 5, 160*deg)), cosine(100, 1, -140*deg), cosine(100, 1, 100*deg)}
	ch := []Channel{{Name: "va", Kind: Voltage, Phase: 'a'}, {Name: "vb", Kind: Voltage, Phase: 'b'}, {Name: "vc", Kind: Voltage, Phase: 'c'},
		{Name: "xa", Kind: Current, Phase: 'a'}, {Name: "xb", Kind: Current, Phase: 'b'}, {Name: "xc", Kind: Current, Phase: 'c'}}
	s, err := NewSetup(Setup{Channels: ch, Orders: allOrders(), Wiring: Wye, NominalV: 230, ILA: 500, Reference: -1,
		Circuits: []Circuit{{Name: "drive1", Currents: []int{3, 4, 5}, ILA: 160}}})
	if err != nil {
		tb.Fatal(err)
	}
	r := NewRecord(s)
	Compute(s, inputFor(tb, s, waves(nWin, append(append([]wave(nil), v...), d1...)...)), r)
	if len(r.Circuits) != 1 || r.Circuits[0].Rec == nil || len(r.SeqV) == 0 {
		tb.Fatalf("%d circuits, %d voltage sequences: the case lacks what it should copy", len(r.Circuits), len(r.SeqV))
	}
	return s, r
}

// TestRecordCopyTo: CopyTo gives a deep copy, bit for bit (nulls included),
// the circuit's record too, into a fresh record and into one of another
// shape, and by Clone; changing the source afterwards leaves the copy alone.
func TestRecordCopyTo(t *testing.T) {
	s, r := copyCase(t)
	for name, dst := range map[string]*Record{"same shape": NewRecord(s), "empty": {}, "Clone": nil} {
		if dst == nil {
			dst = r.Clone()
		} else {
			r.CopyTo(dst)
		}
		if ok, where := sameBits(reflect.ValueOf(*r), reflect.ValueOf(*dst), "Record"); !ok {
			t.Fatalf("%s: copy differs at %s", name, where)
		}
		keep := [3]float64{r.Channels[0].H[1].RMS, r.Circuits[0].Rec.Total.P, r.SeqV[2].Neg}
		r.Channels[0].H[1].RMS, r.Circuits[0].Rec.Total.P, r.SeqV[2].Neg = 12345, -1, 7
		if dst.Channels[0].H[1].RMS == 12345 || dst.Circuits[0].Rec.Total.P == -1 || dst.SeqV[2].Neg == 7 {
			t.Errorf("%s: the copy shares storage with the source", name)
		}
		r.Channels[0].H[1].RMS, r.Circuits[0].Rec.Total.P, r.SeqV[2].Neg = keep[0], keep[1], keep[2]
	}
}
