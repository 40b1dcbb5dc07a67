//go:build !race

package store

import (
	"math/rand/v2"
	"testing"
)

func TestEncodeAllocs(t *testing.T) {
	s := setup8(allOrders())
	r := newRecord(s)
	fillRecord(r, s, rand.New(rand.NewPCG(11, 12)), t0, true)
	buf := make([]byte, 0, 8192)
	if n := testing.AllocsPerRun(100, func() {
		var err error
		if buf, err = encodeRecord(buf[:0], r, 1, s); err != nil {
			t.Fatal(err)
		}
	}); n != 0 {
		t.Fatalf("encodeRecord: %v allocs per call, want 0", n)
	}
}

func TestEncodeSlimAllocs(t *testing.T) {
	s := setup8(allOrders())
	r := newRecord(s)
	fillRecord(r, s, rand.New(rand.NewPCG(11, 12)), t0, true)
	buf := make([]byte, 0, 8192)
	if n := testing.AllocsPerRun(100, func() {
		var err error
		if buf, err = encodeRec(buf[:0], r, 1, s, true); err != nil {
			t.Fatal(err)
		}
	}); n != 0 {
		t.Fatalf("slim encodeRec: %v allocs per call, want 0", n)
	}
}
