package encode

import (
	"bytes"
	"errors"
	"testing"
	"time"

	"github.com/gridloupe/gridloupe/metrics"
)

// refill gives r new values in place, as the pipeline reuses its record:
// a writer that kept the record instead of a copy would print later values.
func refill(r *metrics.Record, i int, next func() float64) {
	r.Start = time.Date(2026, 3, 1, 10, 0, 0, 0, time.UTC).Add(time.Duration(i) * 200 * time.Millisecond)
	r.FreqHz = next()
	for c := range r.Channels {
		r.Channels[c].RMS = next()
		for k := range r.Channels[c].H {
			r.Channels[c].H[k].RMS = next()
		}
	}
	r.Total.P = next()
}

// TestAsyncSameBytes: forty records through Async come out byte for byte
// as through the JSONL writer itself (the synchronous writer is the
// reference), for batches of one to four records, large records (seven
// channels, 50 orders) and small ones that sit in the writer's buffer; after
// a Flush in the middle, everything written so far is out.
func TestAsyncSameBytes(t *testing.T) {
	for _, spec := range []setupSpec{specWyeAll, specSingle} {
		s := buildSetup(t, spec)
		for _, size := range []int{1, 2, 4} {
			var want, got bytes.Buffer
			ref := NewJSONL(&want, s)
			a := NewAsync(NewJSONL(&got, s), s, size)
			r := newRecord(s, randFloats(3))
			next := randFloats(21)
			for i := range 40 {
				refill(r, i, next)
				if err := ref.Write(r); err != nil {
					t.Fatal(err)
				}
				if err := a.Write(r); err != nil {
					t.Fatal(err)
				}
				if i == 17 { // a flush in the middle, as a caller may
					if err := ref.Flush(); err != nil {
						t.Fatal(err)
					}
					if err := a.Flush(); err != nil {
						t.Fatal(err)
					}
					if !bytes.Equal(got.Bytes(), want.Bytes()) {
						t.Errorf("%d channels, batches of %d: after the flush %d bytes are out, want %d", len(s.Channels), size, got.Len(), want.Len())
					}
				}
			}
			if err := ref.Flush(); err != nil {
				t.Fatal(err)
			}
			if err := a.Flush(); err != nil {
				t.Fatal(err)
			}
			if err := a.Close(); err != nil {
				t.Fatal(err)
			}
			if !bytes.Equal(got.Bytes(), want.Bytes()) {
				t.Errorf("%d channels, batches of %d: %d bytes differ from the synchronous writer's %d", len(s.Channels), size, got.Len(), want.Len())
			}
		}
	}
}

// failAfter accepts n bytes, then fails every write with err.
type failAfter struct {
	n   int
	got bytes.Buffer
	err error
}

func (f *failAfter) Write(p []byte) (int, error) {
	if len(p) > f.n {
		k := f.n
		f.got.Write(p[:k])
		f.n = 0
		return k, f.err
	}
	f.n -= len(p)
	f.got.Write(p)
	return len(p), nil
}

// TestAsyncError: when the destination fails part way, Async returns the
// synchronous writer's error, with the same message, from a later Write or
// from Flush, keeps returning it (Write, Close), and the destination
// received the same bytes as from the synchronous writer. Two cases: large
// records that fail during the writes, and small ones that sit in the
// buffer until the final flush fails.
func TestAsyncError(t *testing.T) {
	errFull := errors.New("no space left on device")
	for _, tc := range []struct {
		name  string
		spec  setupSpec
		short int // bytes short of the whole output at which the destination fails
	}{{"write", specWyeAll, 600_000}, {"flush", specSingle, 10}} {
		t.Run(tc.name, func(t *testing.T) {
			s := buildSetup(t, tc.spec)
			run := func(w Writer) (int, error) {
				r := newRecord(s, randFloats(3))
				next := randFloats(21)
				for i := range 30 {
					refill(r, i, next)
					if err := w.Write(r); err != nil {
						return i, err
					}
				}
				return 30, w.Flush()
			}
			var whole bytes.Buffer
			if _, err := run(NewJSONL(&whole, s)); err != nil {
				t.Fatal(err)
			}
			n := whole.Len() - tc.short
			ref := &failAfter{n: n, err: errFull}
			wantAt, wantErr := run(NewJSONL(ref, s))
			if wantErr == nil || (tc.name == "write") != (wantAt < 30) {
				t.Fatalf("the synchronous writer failed with %v at record %d: not the %s case", wantErr, wantAt, tc.name)
			}
			dst := &failAfter{n: n, err: errFull}
			a := NewAsync(NewJSONL(dst, s), s, 3)
			_, gotErr := run(a)
			if !errors.Is(gotErr, errFull) || gotErr.Error() != wantErr.Error() {
				t.Errorf("async error %v, want %q (the synchronous writer's)", gotErr, wantErr)
			}
			if err := a.Write(newRecord(s, randFloats(4))); err == nil || err.Error() != wantErr.Error() {
				t.Errorf("Write after the failure: %v, want the same error again", err)
			}
			if err := a.Close(); err == nil || err.Error() != wantErr.Error() {
				t.Errorf("Close: %v, want the same error", err)
			}
			if !bytes.Equal(dst.got.Bytes(), ref.got.Bytes()) {
				t.Errorf("the destination got %d bytes, the synchronous writer's got %d", dst.got.Len(), ref.got.Len())
			}
		})
	}
}

// TestAsyncClose: Close writes a partly filled batch too (five records in
// batches of four), without flushing; the wrapped writer's own Flush then
// puts out the synchronous writer's bytes.
func TestAsyncClose(t *testing.T) {
	s := buildSetup(t, specSingle)
	var want, got bytes.Buffer
	ref, inner := NewJSONL(&want, s), NewJSONL(&got, s)
	a := NewAsync(inner, s, 4)
	r := newRecord(s, randFloats(3))
	next := randFloats(21)
	for i := range 5 {
		refill(r, i, next)
		if err := ref.Write(r); err != nil {
			t.Fatal(err)
		}
		if err := a.Write(r); err != nil {
			t.Fatal(err)
		}
	}
	if err := a.Close(); err != nil {
		t.Fatal(err)
	}
	if got.Len() != 0 {
		t.Errorf("Close flushed %d bytes, want none before the writer's own Flush", got.Len())
	}
	if err := errors.Join(ref.Flush(), inner.Flush()); err != nil {
		t.Fatal(err)
	}
	if !bytes.Equal(got.Bytes(), want.Bytes()) {
		t.Errorf("%d bytes after Close, want the synchronous writer's %d", got.Len(), want.Len())
	}
}
