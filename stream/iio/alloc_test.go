//go:build !race

package iio

import (
	"math"
	"os"
	"testing"
	"time"

	"github.com/gridloupe/gridloupe/stream/iio/iiotest"
)

// TestReadAllocs: steady-state reading of scans, gaps included, allocates
// nothing per frame (STYLE.md §5).
func TestReadAllocs(t *testing.T) {
	frames := sixCounts(4)
	var ts []int64
	t0 := time.Now().UnixNano()
	for k := range frames {
		step := k
		if k > 20000 {
			step += 7 // a hole of 7 scans
		}
		ts = append(ts, t0+int64(math.Round(float64(step)*1e9/10240)))
	}
	els := []iiotest.Element{{Name: "in_voltage0", Type: "le:s16/16>>0"}, {Name: "in_voltage1", Type: "le:s16/16>>0"},
		{Name: "in_voltage2", Type: "le:s16/16>>0"}, {Name: "in_voltage3", Type: "le:s16/16>>0"},
		{Name: "in_voltage4", Type: "le:s16/16>>0"}, {Name: "in_voltage5", Type: "le:s16/16>>0"},
		{Name: "in_timestamp", Type: "le:s64/64>>0"}}
	tr, err := iiotest.New(t.TempDir(), "dc2-adc", 10240, els, nil)
	if err != nil {
		t.Fatal(err)
	}
	if err := os.WriteFile(tr.Node, iiotest.S16Scans(frames, ts), 0o644); err != nil {
		t.Fatal(err)
	}
	s, err := Open(Config{Device: "dc2-adc", Channels: []string{"voltage0", "voltage1", "voltage2", "voltage3", "voltage4", "voltage5"},
		Sysfs: tr.Sysfs, Dev: tr.Dev})
	if err != nil {
		t.Fatal(err)
	}
	defer s.Close()
	dst := make([]float64, 6*128)
	if a := testing.AllocsPerRun(300, func() { _, _ = s.ReadFrames(dst) }); a != 0 {
		t.Errorf("ReadFrames: %v allocs per call, want 0", a)
	}
}
