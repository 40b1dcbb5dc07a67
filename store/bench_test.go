package store

import (
	"bufio"
	"math/rand/v2"
	"os"
	"path/filepath"
	"strconv"
	"strings"
	"testing"
	"time"

	"github.com/gridloupe/gridloupe/metrics"
)

// wchar returns this process's bytes passed to write syscalls (Linux), or -1.
func wchar() int64 {
	f, err := os.Open("/proc/self/io")
	if err != nil {
		return -1
	}
	defer f.Close()
	sc := bufio.NewScanner(f)
	for sc.Scan() {
		if v, ok := strings.CutPrefix(sc.Text(), "wchar: "); ok {
			n, err := strconv.ParseInt(v, 10, 64)
			if err == nil {
				return n
			}
		}
	}
	return -1
}

// BenchmarkPutAggregates stores batches of records of 8 channels and 17
// orders: 200 3-s records (a batch of ten minutes of 3 s values), 20 (what commit_every: 60s
// collects at 3 s) and a lone 10-min record. Reported: bbolt page-run writes
// × page size per commit (tx_bytes/op, a lower bound) and write-syscall
// bytes per commit (wchar_bytes/op, Linux).
func BenchmarkPutAggregates(b *testing.B) {
	for _, bc := range []struct {
		name string
		iv   metrics.Interval
		n    int
		step time.Duration
	}{
		{"3s-200", metrics.Int3s, 200, 3 * time.Second},
		{"3s-20", metrics.Int3s, 20, 3 * time.Second},
		{"10min-1", metrics.Int10min, 1, 10 * time.Minute},
	} {
		b.Run(bc.name, func(b *testing.B) {
			db, err := Open(Options{Path: filepath.Join(b.TempDir(), "bench.db")})
			if err != nil {
				b.Fatal(err)
			}
			defer db.Close()
			s := setup8(orders17)
			if err := db.SetLayout(s); err != nil {
				b.Fatal(err)
			}
			rng := rand.New(rand.NewPCG(41, 42))
			batch := make([]*metrics.Record, bc.n)
			for i := range batch {
				batch[i] = newRecord(s)
				fillRecord(batch[i], s, rng, t0, true)
				batch[i].Interval = bc.iv
			}
			now := t0
			before := db.Stats()
			w0 := wchar()
			b.ReportAllocs()
			for b.Loop() {
				for _, r := range batch {
					r.Start = now
					now = now.Add(bc.step)
				}
				if err := db.PutAggregates(batch); err != nil {
					b.Fatal(err)
				}
			}
			after := db.Stats()
			if after.Records[bc.iv] == 0 {
				b.Fatal("nothing stored")
			}
			b.ReportMetric(float64(after.BytesWritten-before.BytesWritten)/float64(b.N), "tx_bytes/op")
			if w1 := wchar(); w0 >= 0 && w1 >= 0 {
				b.ReportMetric(float64(w1-w0)/float64(b.N), "wchar_bytes/op")
			}
		})
	}
}
