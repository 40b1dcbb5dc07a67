package comtrade

import (
	"errors"
	"strings"
	"testing"
	"time"
)

// cfg1999 is a recording of the invented North Weir DC-2 cabinet in the
// IEEE C37.111-1999 layout: station line with revision year, counts,
// 13-field analog lines, 5-field digital lines, line frequency, nrates with
// samp,endsamp, two time stamps, file type, timemult.
const cfg1999 = `North Weir DC-2,gw1-rec,1999
3,2A,1D
1,VA,A,bus,V,0.01,0.5,0,-32767,32767,1,1,P
2,IA,A,drive 1,A,0.002,0,0,-32767,32767,200,1,S
1,trip,,drive 1,0
50
1
10240,30720
01/03/2026,10:00:00.000000
01/03/2026,10:00:00.100000
BINARY
1
`

// TestParseConfig: the fields of 1991, 1999 and 2013 files.
func TestParseConfig(t *testing.T) {
	c, err := ParseConfig("rec.cfg", []byte(cfg1999))
	if err != nil {
		t.Fatal(err)
	}
	want := time.Date(2026, 3, 1, 10, 0, 0, 0, time.UTC)
	switch {
	case c.Year != 1999 || c.Station != "North Weir DC-2" || len(c.Analog) != 2 || c.Digital != 1:
		t.Errorf("header %+v", c)
	case c.Analog[1].ID != "IA" || c.Analog[1].A != 0.002 || c.Analog[1].PS != 'S' || c.Analog[1].Factor() != 200:
		t.Errorf("analog 2 %+v, want IA, a 0.002, secondary with ratio 200 (C37.111 primary/secondary)", c.Analog[1])
	case c.LineHz != 50 || len(c.Rates) != 1 || c.Rates[0] != (Rate{10240, 30720}) || c.Samples() != 30720:
		t.Errorf("rates %+v line %v", c.Rates, c.LineHz)
	case !c.Start.Equal(want) || !c.Trigger.Equal(want.Add(100*time.Millisecond)):
		t.Errorf("times %v %v, want %v and 100 ms later (dd/mm/yyyy)", c.Start, c.Trigger, want)
	case c.FileType != Binary || c.TimeMult != 1:
		t.Errorf("type %q timemult %v", c.FileType, c.TimeMult)
	}
	// 2013: FLOAT32, nanosecond stamps, time code lines after timemult
	c13 := strings.Replace(cfg1999, ",1999\n", ",2013\n", 1)
	c13 = strings.Replace(c13, "BINARY\n1\n", "FLOAT32\n0.5\n+1h00,+1h00\nB,0\n", 1)
	c13 = strings.Replace(c13, "10:00:00.000000", "10:00:00.000000125", 1)
	c, err = ParseConfig("rec.cfg", []byte(c13))
	if err != nil {
		t.Fatal(err)
	}
	if c.Year != 2013 || c.FileType != Float32 || c.TimeMult != 0.5 || c.Start.Nanosecond() != 125 {
		t.Errorf("2013: %+v", c)
	}
	// 1991: no revision year, 10-field analog lines, 3-field digital lines, no timemult
	c91 := strings.Replace(cfg1999, ",1999\n", "\n", 1)
	c91 = strings.Replace(c91, ",-32767,32767,1,1,P\n", ",-32767,32767\n", 1)
	c91 = strings.Replace(c91, ",-32767,32767,200,1,S\n", ",-32767,32767\n", 1)
	c91 = strings.Replace(c91, "BINARY\n1\n", "ASCII\n", 1)
	c, err = ParseConfig("rec.cfg", []byte(c91))
	if err != nil {
		t.Fatal(err)
	}
	if c.Year != 1991 || c.Analog[1].Factor() != 1 || c.TimeMult != 1 || c.FileType != ASCII {
		t.Errorf("1991: %+v", c)
	}
}

// TestParseConfigErrors: each fault names the file, the line (and field)
// and what is allowed.
func TestParseConfigErrors(t *testing.T) {
	cases := []struct {
		name, old, new string
		want           string
	}{
		{"bad year", ",1999\n", ",1998\n", "rec.cfg:1:3: revision year \"1998\": allowed are 1991, 1999, 2013"},
		{"counts disagree", "3,2A,1D", "4,2A,1D", "rec.cfg:2:1: total 4 is not 2 analog + 1 digital channels"},
		{"count without A", "3,2A,1D", "3,2,1D", "rec.cfg:2:2: \"2\": want a count followed by A"},
		{"analog fields", "1,VA,A,bus,V,0.01,0.5,0,-32767,32767,1,1,P", "1,VA,A,bus,V,0.01", "rec.cfg:3: analog channel 1: 6 fields, want 13"},
		{"analog index", "2,IA,", "3,IA,", "rec.cfg:4:1: analog channel 2: index \"3\", want 2"},
		{"a not a number", ",0.002,0,", ",x,0,", "rec.cfg:4:6: a \"x\" is not a number"},
		{"PS", ",200,1,S", ",200,1,Q", "rec.cfg:4:13: PS \"Q\": allowed are P (primary) and S (secondary)"},
		{"secondary without ratio", ",200,1,S", ",0,1,S", "rec.cfg:4:11: channel \"IA\" is in secondary units"},
		{"rate zero", "10240,30720", "0,30720", "rec.cfg:8:1: sampling rate 0 Hz: must be more than 0"},
		{"date", "01/03/2026,10:00:00.000000", "2026-03-01,10:00:00", "rec.cfg:9:1: time stamp \"2026-03-01,10:00:00\": want dd/mm/yyyy,hh:mm:ss.ssssss"},
		{"no such day", "01/03/2026,10:00:00.000000", "31/02/2026,10:00:00.000000", "rec.cfg:9:1: time stamp \"31/02/2026,10:00:00.000000\": no such day"},
		{"file type", "BINARY\n", "HEX\n", "rec.cfg:11:1: file type \"HEX\": allowed are ASCII, BINARY, BINARY32, FLOAT32"},
		{"float32 in 1999", "BINARY\n", "FLOAT32\n", "rec.cfg:11:1: file type FLOAT32 needs revision 2013"},
		{"timemult", "BINARY\n1\n", "BINARY\n-1\n", "rec.cfg:12:1: timemult -1: must be more than 0"},
		{"ends early", "01/03/2026,10:00:00.100000\nBINARY\n1\n", "", "rec.cfg:10: the file ends where the time stamp line belongs"},
	}
	for _, tc := range cases {
		t.Run(tc.name, func(t *testing.T) {
			doc := strings.Replace(cfg1999, tc.old, tc.new, 1)
			if doc == cfg1999 {
				t.Fatal("case changes nothing")
			}
			_, err := ParseConfig("rec.cfg", []byte(doc))
			if err == nil || !strings.HasPrefix(err.Error(), tc.want) || !errors.Is(err, ErrConfig) {
				t.Errorf("err %v, want it to start %q and wrap ErrConfig", err, tc.want)
			}
		})
	}
}

// TestMap: channels by id (case-insensitive, trimmed) or by 1-based index.
func TestMap(t *testing.T) {
	c, _ := ParseConfig("rec.cfg", []byte(cfg1999))
	got, err := c.Map([]string{"ia", " va ", "x"}, []int{0, 0, 1})
	if err != nil || got[0] != 1 || got[1] != 0 || got[2] != 0 {
		t.Errorf("Map = %v, %v; want [1 0 0]", got, err)
	}
	if _, err := c.Map([]string{"vb"}, nil); err == nil || !strings.Contains(err.Error(), "the file has: VA, IA") {
		t.Errorf("unknown id: %v", err)
	}
	if _, err := c.Map([]string{"va"}, []int{3}); err == nil || !strings.Contains(err.Error(), "comtrade: 3, but the file has 2 analog channels") {
		t.Errorf("index out of range: %v", err)
	}
}
