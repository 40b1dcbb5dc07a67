package iiotest

import (
	"encoding/binary"
	"os"
	"path/filepath"
	"strconv"
)

// Element is one scan element of a fake device.
type Element struct {
	Name    string // e.g. "in_voltage0"
	Type    string // type string, e.g. "le:s16/16>>0"
	Enabled bool   // _en before the test starts
}

// Tree is a fake device: Dir is its sysfs directory, Node its character
// device path (not created: make it a regular file or a FIFO).
type Tree struct {
	Sysfs, Dev, Dir, Node string
}

// New writes a device named name ("iio:device0") with the elements in
// index order, sampling_frequency fs, a realtime timestamp clock, and
// buffer/{enable,length}; attrs adds or overrides attribute files
// (relative path → content).
func New(root, name string, fs float64, els []Element, attrs map[string]string) (*Tree, error) {
	t := &Tree{Sysfs: filepath.Join(root, "sys"), Dev: filepath.Join(root, "dev")}
	t.Dir = filepath.Join(t.Sysfs, "iio:device0")
	t.Node = filepath.Join(t.Dev, "iio:device0")
	files := map[string]string{
		"name":                    name,
		"sampling_frequency":      strconv.FormatFloat(fs, 'f', -1, 64),
		"current_timestamp_clock": "realtime",
		"buffer/enable":           "0",
		"buffer/length":           "128",
	}
	for i, e := range els {
		en := "0"
		if e.Enabled {
			en = "1"
		}
		files["scan_elements/"+e.Name+"_en"] = en
		files["scan_elements/"+e.Name+"_index"] = strconv.Itoa(i)
		files["scan_elements/"+e.Name+"_type"] = e.Type
	}
	for k, v := range attrs {
		files[k] = v
	}
	for rel, v := range files {
		p := filepath.Join(t.Dir, rel)
		if err := os.MkdirAll(filepath.Dir(p), 0o755); err != nil {
			return nil, err
		}
		if err := os.WriteFile(p, []byte(v+"\n"), 0o644); err != nil {
			return nil, err
		}
	}
	return t, os.MkdirAll(t.Dev, 0o755)
}

// Read returns an attribute's content without the newline.
func (t *Tree) Read(rel string) string {
	b, err := os.ReadFile(filepath.Join(t.Dir, rel))
	if err != nil {
		return "<" + err.Error() + ">"
	}
	if n := len(b); n > 0 && b[n-1] == '\n' {
		b = b[:n-1]
	}
	return string(b)
}

// S16Scans encodes frames of n int16 channels (little-endian, at 0, 2, …)
// followed by a little-endian s64 timestamp aligned to 8 bytes, as the
// kernel lays out such a scan; ts[i] is frame i's time in ns.
func S16Scans(frames [][]int16, ts []int64) []byte {
	if len(frames) == 0 {
		return nil
	}
	n := len(frames[0])
	tsOff := (2*n + 7) / 8 * 8
	size := tsOff + 8
	b := make([]byte, size*len(frames))
	for i, f := range frames {
		s := b[i*size:]
		for c, v := range f {
			binary.LittleEndian.PutUint16(s[2*c:], uint16(v))
		}
		binary.LittleEndian.PutUint64(s[tsOff:], uint64(ts[i]))
	}
	return b
}
