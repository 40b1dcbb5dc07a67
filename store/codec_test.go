package store

import (
	"encoding/binary"
	"errors"
	"math/rand/v2"
	"os"
	"path/filepath"
	"strconv"
	"strings"
	"testing"
	"time"

	"github.com/gridloupe/gridloupe/metrics"
)

var t0 = time.Date(2026, 3, 1, 10, 0, 0, 0, time.UTC)

func TestRecordRoundTrip(t *testing.T) {
	t.Parallel()
	cases := []struct {
		name    string
		setup   *metrics.Setup
		withSeq bool
		src     string
	}{
		{"8ch all orders wye", setup8(allOrders()), true, "random values, fixed PCG seed; tolerances from binary32 precision and 0.01° rounding"},
		{"8ch 17 orders wye", setup8(orders17), true, "random values, fixed PCG seed"},
		{"8ch no sequence", setup8([]int{1, 5, 7}), false, "random values, fixed PCG seed"},
		{"single-phase", setup1([]int{1, 3, 5}), false, "random values, fixed PCG seed"},
		{"delta, two CTs", setupDelta([]int{1, 5, 7}), true, "random values, fixed PCG seed (DESIGN Delta wiring: total without phases)"},
		{"fundamental only", setup1([]int{1}), false, "random values, fixed PCG seed"},
	}
	for _, tc := range cases {
		t.Run(tc.name, func(t *testing.T) {
			t.Parallel()
			rng := rand.New(rand.NewPCG(1, 2))
			for i := range 50 {
				want := newRecord(tc.setup)
				fillRecord(want, tc.setup, rng, t0.Add(time.Duration(i)*3*time.Second+123456789), tc.withSeq)
				b, err := encodeRecord(nil, want, 7, tc.setup)
				if err != nil {
					t.Fatal(err)
				}
				if id, _ := recordLayoutID(b); id != 7 {
					t.Fatalf("layout id %d, want 7", id)
				}
				got, err := decodeRecord(b, metrics.Int3s, tc.setup)
				if err != nil {
					t.Fatal(err)
				}
				compareRecords(t, want, got)
			}
		})
	}
}

// recordSize is the closed form of the version-3 format in doc.go: seven
// float32 scalars per channel (rms, dc, thd, thd_h50, tdd, tdd_h50,
// crest_factor).
func recordSize(nch, nord, nph int, freq10s, seqV, seqI bool) int {
	n := 1 + 2 + 8 + 8 + 3 /* uvarint(30720) */ + 2 + 1 + 4
	if freq10s {
		n += 4
	}
	n += nch * (1 + 7*4 + nord*(4+2))
	n++
	n += nph * (1 + 11*4)
	if nph > 0 {
		n += 11 * 4
	}
	for _, b := range []bool{seqV, seqI} {
		if b {
			n += nord * 3 * 4
		}
	}
	return n + 2*4
}

func TestRecordBudget(t *testing.T) {
	t.Parallel()
	cases := []struct {
		name   string
		orders []int
		budget int
		src    string
	}{
		{"8ch 50 orders", allOrders(), RecordBudget8Ch50, "budget stated in doc.go"},
		{"8ch 17 orders", orders17, 1700, "1,677 bytes by the closed form in doc.go, rounded up"},
	}
	for _, tc := range cases {
		t.Run(tc.name, func(t *testing.T) {
			t.Parallel()
			s := setup8(tc.orders)
			r := newRecord(s)
			fillRecord(r, s, rand.New(rand.NewPCG(3, 4)), t0, true)
			r.HasFreq10s = true
			b, err := encodeRecord(nil, r, 1, s)
			if err != nil {
				t.Fatal(err)
			}
			t.Logf("%s: %d bytes per record", tc.name, len(b))
			// src: README "The store" quotes the measured size; it must be this one
			if readme := readmeText(t); !strings.Contains(readme, thousands(len(b))) {
				t.Errorf("README \"The store\" does not quote the measured %s bytes (%s)", thousands(len(b)), tc.name)
			}
			if want := recordSize(8, len(tc.orders), 3, true, true, true); len(b) != want {
				t.Errorf("%d bytes, closed form says %d", len(b), want)
			}
			if len(b) > tc.budget {
				t.Errorf("%d bytes, budget %d", len(b), tc.budget)
			}
		})
	}
}

func TestEncodeRejectsMismatch(t *testing.T) {
	t.Parallel()
	s := setup8([]int{1, 5, 7})
	cases := []struct {
		name  string
		build *metrics.Setup // layout the record is sized for
		mod   func(r *metrics.Record)
		src   string
	}{
		{"orders differ", setup8([]int{1, 5, 11}), func(*metrics.Record) {}, "layout contract: H follows Setup.Orders"},
		{"channel count", s, func(r *metrics.Record) { r.Channels = r.Channels[:2] }, "layout contract: Channels follows Setup.Channels"},
		{"sequence length", s, func(r *metrics.Record) { r.SeqV = make([]metrics.Seq, 2) }, "layout contract: SeqV per Setup.Orders"},
		{"four phases", s, func(r *metrics.Record) { r.Phases = append(r.Phases, r.Phases[0]) }, "at most phases a, b, c"},
	}
	for _, tc := range cases {
		t.Run(tc.name, func(t *testing.T) {
			r := newRecord(tc.build)
			fillRecord(r, tc.build, rand.New(rand.NewPCG(5, 6)), t0, true)
			tc.mod(r)
			if _, err := encodeRecord(nil, r, 1, s); !errors.Is(err, ErrBadLayout) {
				t.Errorf("got %v, want ErrBadLayout", err)
			}
		})
	}
}

func TestDecodeRejectsDamage(t *testing.T) {
	t.Parallel()
	s := setup8(orders17)
	r := newRecord(s)
	fillRecord(r, s, rand.New(rand.NewPCG(7, 8)), t0, true)
	b, err := encodeRecord(nil, r, 1, s)
	if err != nil {
		t.Fatal(err)
	}
	cases := []struct {
		name string
		data []byte
		src  string
	}{
		{"truncated", b[:len(b)-1], "format: fixed length per layout"},
		{"trailing byte", append(append([]byte(nil), b...), 0), "format: fixed length per layout"},
		{"bad version", append([]byte{9}, b[1:]...), "format: leading version byte 1"},
		{"empty", nil, "format"},
	}
	for _, tc := range cases {
		t.Run(tc.name, func(t *testing.T) {
			if _, err := decodeRecord(tc.data, metrics.Int3s, s); !errors.Is(err, ErrCorrupt) {
				t.Errorf("got %v, want ErrCorrupt", err)
			}
		})
	}
}

func FuzzDecode(f *testing.F) {
	s := setup8([]int{1, 3, 5})
	rng := rand.New(rand.NewPCG(9, 10))
	for i := range 4 {
		r := newRecord(s)
		fillRecord(r, s, rng, t0, i%2 == 0)
		b, err := encodeRec(nil, r, 1, s, i >= 2) // two full, two slim (codec3s.go)
		if err != nil {
			f.Fatal(err)
		}
		f.Add(b)
	}
	f.Add([]byte{1, 0, 1})
	f.Fuzz(func(t *testing.T, b []byte) {
		r, err := decodeRecord(b, metrics.Int10min, s)
		if err != nil {
			return
		}
		if len(r.Channels) != len(s.Channels) || len(r.Phases) > 3 {
			t.Fatalf("decoded record has %d channels, %d phases", len(r.Channels), len(r.Phases))
		}
	})
}

func FuzzDecodeMessage(f *testing.F) {
	v, _ := encodeMessage(nil, &Message{Topic: "gridloupe/north-weir-dc2/dc2-gw1/alarm", Payload: []byte(`{"seq":1}`), QoS: 1, Queued: t0})
	f.Add(v)
	f.Add([]byte{})
	f.Fuzz(func(t *testing.T, b []byte) {
		m, err := decodeMessage(1, ClassEvent, b)
		if err != nil {
			return
		}
		if len(m.Topic)+len(m.Payload) > len(b) {
			t.Fatalf("decoded more bytes than given")
		}
	})
}

func FuzzLayout(f *testing.F) {
	b, _ := marshalLayout(setup8(orders17))
	f.Add(b)
	f.Add([]byte(`{"channels":[{"name":"x","kind":"voltage","phase":"a"}],"orders":[1],"wiring":"wye"}`))
	f.Fuzz(func(t *testing.T, b []byte) {
		s, err := unmarshalLayout(b)
		if err != nil {
			return
		}
		if _, err := marshalLayout(s); err != nil {
			t.Fatalf("decoded layout does not re-encode: %v", err)
		}
	})
}

// TestRecordBytes: the exported estimate matches the encoder (closed form of
// the format in doc.go, plus the 16-byte key and bbolt's leaf element).
func TestRecordBytes(t *testing.T) {
	s := setup8(allOrders())
	r := metrics.NewRecord(s)
	r.Interval, r.Start, r.DurationS, r.Samples, r.HasFreq10s = metrics.Int3s, time.Unix(1, 0), 3, 30720, true
	b, err := encodeRecord(nil, r, 1, s)
	if err != nil {
		t.Fatal(err)
	}
	if got, want := RecordBytes(s), len(b)+16+leafElemOverhead; got != want {
		t.Errorf("RecordBytes %d, encoder %d + key and leaf overhead = %d", got, len(b), want)
	}
}

// TestDeltaLayoutRoundTrip: a stored delta layout keeps its line-to-line
// channels and derives the same wattmeter elements. src: DESIGN Delta wiring.
func TestDeltaLayoutRoundTrip(t *testing.T) {
	t.Parallel()
	want := setupDelta([]int{1, 5})
	b, err := marshalLayout(want)
	if err != nil {
		t.Fatal(err)
	}
	got, err := unmarshalLayout(b)
	if err != nil {
		t.Fatal(err)
	}
	if got.Wiring != metrics.Delta || got.Channels[1].To != 'b' || got.Channels[1].Phase != 'c' ||
		len(got.Products) != 2 || got.Products[0] != want.Products[0] || got.Products[1] != want.Products[1] || !got.HasTotal() {
		t.Errorf("layout %+v, want %+v", got, want)
	}
}

// readmeText returns the repository's README.
func readmeText(t *testing.T) string {
	t.Helper()
	b, err := os.ReadFile(filepath.Join("..", "README.md"))
	if err != nil {
		t.Fatal(err)
	}
	return string(b)
}

// thousands prints n with comma thousands separators, as the README does.
func thousands(n int) string {
	s := strconv.Itoa(n)
	for i := len(s) - 3; i > 0; i -= 3 {
		s = s[:i] + "," + s[i:]
	}
	return s
}

// TestDecodeVersion2: a record written before crest_factor existed
// (version 2: six scalars per channel) decodes with crest_factor null and
// every other value intact (README "Migration notes": old stores stay
// readable).
func TestDecodeVersion2(t *testing.T) {
	t.Parallel()
	s := setup8(orders17)
	want := newRecord(s)
	fillRecord(want, s, rand.New(rand.NewPCG(5, 6)), t0, true)
	b, err := encodeRecord(nil, want, 1, s)
	if err != nil {
		t.Fatal(err)
	}
	// Rebuild the bytes as version 2 wrote them: drop each channel's
	// crest_factor (the 7th float32 after the channel's flags byte).
	off := 1 + 2 + 8 + 8
	_, n := binary.Uvarint(b[off:])
	off += n + 2 + 1 + 4
	if want.HasFreq10s {
		off += 4
	}
	v2 := append([]byte(nil), b[:off]...)
	for range s.Channels {
		chLen := 1 + 7*4 + len(s.Orders)*(4+2)
		ch := b[off : off+chLen]
		v2 = append(v2, ch[:1+6*4]...)
		v2 = append(v2, ch[1+7*4:]...)
		off += chLen
	}
	v2 = append(v2, b[off:]...)
	v2[0] = 2
	got, err := decodeRecord(v2, metrics.Int3s, s)
	if err != nil {
		t.Fatal(err)
	}
	for i := range got.Channels {
		if !metrics.IsNull(got.Channels[i].CrestFactor) {
			t.Errorf("channel %d: crest_factor %v from a version-2 record, want null", i, got.Channels[i].CrestFactor)
		}
		got.Channels[i].CrestFactor = want.Channels[i].CrestFactor
	}
	compareRecords(t, want, got)
}
