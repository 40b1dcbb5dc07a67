package web

import (
	"context"
	"encoding/json"
	"io"
	"math"
	"net/http"
	"strings"
	"testing"
	"time"

	dto "github.com/prometheus/client_model/go"
	"github.com/prometheus/common/expfmt"
	"github.com/prometheus/common/model"

	"github.com/gridloupe/gridloupe/metrics"
	"github.com/gridloupe/gridloupe/metrics/energy"
	"github.com/gridloupe/gridloupe/metrics/metricstest"
	"github.com/gridloupe/gridloupe/stream/live"
)

// relTol: values pass through float64 untouched except the % → ratio
// scaling, one rounding (common practice, no source).
const relTol = 1e-12

// record is an invented North Weir 3 s record (DESIGN.md scenario values).
func record(s *metrics.Setup) *metrics.Record {
	r := metrics.NewRecord(s)
	r.Interval, r.Start, r.DurationS = metrics.Int3s, time.Date(2026, 3, 1, 10, 0, 3, 0, time.UTC), 3
	r.FreqHz = 50.02
	for i := range r.Channels {
		r.Channels[i].RMS = 230.05
		r.Channels[i].THDPct = 2.085
		r.Channels[i].THDH50Pct = 2.07
		r.Channels[i].TDDPct = metrics.Null()
		r.Channels[i].TDDH50Pct = 8.56
		for k := range r.Channels[i].H {
			r.Channels[i].H[k].RMS, r.Channels[i].H[k].Pct, r.Channels[i].H[k].PctIL, r.Channels[i].H[k].PhaseDeg = 1, 0.5, 0.3, 10
		}
	}
	for i := range r.Phases {
		r.Phases[i].P, r.Phases[i].Q1, r.Phases[i].S, r.Phases[i].PF, r.Phases[i].DPF = 10330, 2190, 11020, 0.937, 0.978
	}
	r.Total = metrics.TotalValues{P: 30990, Q1: 6570, S: 33060, Se: 33100, Ve: 230.05, Ie: 47.9, PF: 0.936, DPF: 0.978}
	r.UnbV, r.UnbI = 0.39, 0.87
	return r
}

func start(t *testing.T) (string, *live.Board, *time.Time) {
	t.Helper()
	s := metricstest.Wye(t)
	now := new(time.Time)
	*now = time.Date(2026, 3, 1, 10, 0, 10, 0, time.UTC)
	b := live.New(s, func() time.Time { return *now }, func() live.Health {
		return live.Health{RecordsStored: 812, RecordsDropped: 3, OutboxDepth: 17, StoreBytes: 1 << 20, StoreErrors: 2, Windows: 12000, MQTTConnected: true}
	})
	srv, err := New(Config{Addr: "127.0.0.1:0", Board: b, Site: "north-weir-dc2", Gateway: "dc2-gw1",
		Alarms: []Alarm{{"tdd-ia", "warning"}, {"pf-total", "info"}}, BusV: 400, IscOverIL: 6100.0 / 160, IL: 160})
	if err != nil {
		t.Fatal(err)
	}
	if err := srv.Listen(); err != nil {
		t.Fatal(err)
	}
	ctx, cancel := context.WithCancel(context.Background())
	done := make(chan error, 1)
	go func() { done <- srv.Run(ctx) }()
	t.Cleanup(func() {
		cancel()
		if err := <-done; err != nil {
			t.Error(err)
		}
	})
	return "http://" + srv.Addr(), b, now
}

func get(t *testing.T, url string) (string, http.Header) {
	t.Helper()
	resp, err := http.Get(url)
	if err != nil {
		t.Fatal(err)
	}
	defer resp.Body.Close()
	body, _ := io.ReadAll(resp.Body)
	if resp.StatusCode != 200 {
		t.Fatalf("%s: %s", url, resp.Status)
	}
	return string(body), resp.Header
}

func gauge(t *testing.T, fams map[string]*dto.MetricFamily, name string, labels map[string]string) (float64, bool) {
	t.Helper()
	f := fams[name]
	if f == nil {
		return 0, false
	}
next:
	for _, m := range f.Metric {
		have := map[string]string{}
		for _, l := range m.Label {
			have[l.GetName()] = l.GetValue()
		}
		for k, v := range labels {
			if have[k] != v {
				continue next
			}
		}
		if m.Gauge != nil {
			return m.Gauge.GetValue(), true
		}
		return m.Counter.GetValue(), true
	}
	return 0, false
}

func TestMetrics(t *testing.T) {
	url, b, now := start(t)
	b.Put(record(b.Setup()), []string{"tdd-ia"})
	*now = now.Add(7 * time.Second)
	body, hdr := get(t, url+"/metrics")
	if ct := hdr.Get("Content-Type"); !strings.HasPrefix(ct, "text/plain") {
		t.Errorf("Content-Type %q, want the text exposition format", ct)
	}
	p := expfmt.NewTextParser(model.UTF8Validation)
	fams, err := p.TextToMetricFamilies(strings.NewReader(body))
	if err != nil {
		t.Fatalf("/metrics is not valid Prometheus text: %v\n%.500s", err, body)
	}
	base := map[string]string{"site": "north-weir-dc2", "gateway": "dc2-gw1", "level": "3s"}
	with := func(kv ...string) map[string]string {
		m := map[string]string{}
		for k, v := range base {
			m[k] = v
		}
		for i := 0; i+1 < len(kv); i += 2 {
			m[kv[i]] = kv[i+1]
		}
		return m
	}
	cases := []struct {
		name   string
		labels map[string]string
		want   float64
		src    string
	}{
		{"gridloupe_frequency_hertz", with(), 50.02, "the record put on the board"},
		{"gridloupe_active_power_watts", with("phase", "total"), 30990, "same"},
		{"gridloupe_fundamental_reactive_power_vars", with("phase", "b"), 2190, "same"},
		{"gridloupe_rms_volts", with("channel", "vc", "phase", "c"), 230.05, "same"},
		{"gridloupe_thd_h50_ratio", with("channel", "va", "phase", "a"), 0.0207, "2.07 % as a ratio (Prometheus naming: base units, ratios not percent)"},
		{"gridloupe_tdd_h50_ratio", with("channel", "ia", "phase", "a"), 0.0856, "8.56 % as a ratio"},
		{"gridloupe_voltage_unbalance_ratio", with(), 0.0039, "0.39 % as a ratio"},
		{"gridloupe_value_age_seconds", with(), 7, "the board's clock is 7 s after the record arrived"},
		{"gridloupe_alarm_active", map[string]string{"alarm": "tdd-ia", "severity": "warning"}, 1, "raised on the board"},
		{"gridloupe_alarm_active", map[string]string{"alarm": "pf-total"}, 0, "not raised"},
		{"gridloupe_records_dropped_total", nil, 3, "the health function's figures"},
		{"gridloupe_outbox_messages", nil, 17, "same"},
		{"gridloupe_store_bytes", nil, 1 << 20, "same"},
	}
	for _, tc := range cases {
		v, ok := gauge(t, fams, tc.name, tc.labels)
		if !ok {
			t.Errorf("%s%v missing", tc.name, tc.labels)
			continue
		}
		if math.Abs(v-tc.want) > relTol*math.Abs(tc.want) {
			t.Errorf("%s%v = %v, want %v (src: %s)", tc.name, tc.labels, v, tc.want, tc.src)
		}
	}
	if _, ok := gauge(t, fams, "gridloupe_active_energy_import_joules_total", nil); ok {
		t.Error("energy exported before the gateway published any")
	}
	b.SetEnergy(live.Energy{Readings: []energy.Reading{{Circuit: "main", Counters: energy.Counters{ImportWh: 1000, VarhQ: [4]float64{0, 0, 0, 2}}}},
		Demand:   energy.Demand{A: [3]float64{120.4, math.NaN(), 121}, W: 71460, Month: energy.Month{MaxA: [3]float64{150, math.NaN(), 151}, MaxW: math.NaN()}},
		Estimate: energy.IL{A: math.NaN()}})
	body, _ = get(t, url+"/metrics")
	if fams, err = p.TextToMetricFamilies(strings.NewReader(body)); err != nil {
		t.Fatal(err)
	}
	for _, tc := range []struct {
		name   string
		labels map[string]string
		want   float64
		src    string
	}{
		{"gridloupe_active_energy_import_joules_total", map[string]string{"circuit": "main"}, 3.6e6, "1 kWh = 3.6 MJ (SI)"},
		{"gridloupe_fundamental_reactive_energy_var_seconds_total", map[string]string{"circuit": "main", "quadrant": "q4"}, 7200, "2 varh = 7200 var·s"},
		{"gridloupe_demand_current_amperes", map[string]string{"phase": "c"}, 121, "the board's demand"},
		{"gridloupe_demand_month_max_current_amperes", map[string]string{"phase": "a"}, 150, "same"},
	} {
		if v, ok := gauge(t, fams, tc.name, tc.labels); !ok || v != tc.want {
			t.Errorf("%s%v = %v (present %v), want %v (src: %s)", tc.name, tc.labels, v, ok, tc.want, tc.src)
		}
	}
	if _, ok := gauge(t, fams, "gridloupe_demand_current_amperes", map[string]string{"phase": "b"}); ok {
		t.Error("a phase without demand (NaN) was exported")
	}
	if _, ok := gauge(t, fams, "gridloupe_il_amperes", nil); ok {
		t.Error("IL exported with neither il_a nor an estimate")
	}
	if _, ok := gauge(t, fams, "gridloupe_tdd_ratio", with("channel", "ia")); ok {
		t.Error("a null tdd_pct was exported; undefined values are left out")
	}
	if _, ok := gauge(t, fams, "gridloupe_frequency_hertz", with("level", "10min")); ok {
		t.Error("a 10 min value was exported before any 10 min record")
	}
	if f := fams["gridloupe_records_stored_total"]; f == nil || f.GetType() != dto.MetricType_COUNTER {
		t.Error("gridloupe_records_stored_total is not a counter (Prometheus naming: _total is a counter)")
	}
}

func TestLatestJSON(t *testing.T) {
	url, b, now := start(t)
	body, _ := get(t, url+"/api/latest")
	var before map[string]any
	if err := json.Unmarshal([]byte(body), &before); err != nil {
		t.Fatalf("not JSON: %v\n%s", err, body)
	}
	if lv := before["levels"].(map[string]any); lv["3s"] != nil {
		t.Errorf("3s before any record = %v, want null", lv["3s"])
	}
	b.Put(record(b.Setup()), nil)
	*now = now.Add(7 * time.Second)
	body, _ = get(t, url+"/api/latest")
	var d struct {
		Levels map[string]*struct {
			AgeS   float64 `json:"age_s"`
			Record struct {
				FreqHz   float64 `json:"freq_hz"`
				Channels map[string]struct {
					TDDPct *float64 `json:"tdd_pct"`
				} `json:"channels"`
			} `json:"record"`
		} `json:"levels"`
		Limits struct {
			VIndiv  float64   `json:"voltage_individual_pct"`
			VTHD    float64   `json:"voltage_thd_pct"`
			Row     string    `json:"current_row"`
			TDD     float64   `json:"tdd_pct"`
			Current []float64 `json:"current_pct"`
		} `json:"limits"`
		EventsNote string `json:"events_note"`
	}
	if err := json.Unmarshal([]byte(body), &d); err != nil {
		t.Fatalf("not JSON: %v\n%s", err, body)
	}
	r := d.Levels["3s"]
	if r == nil || r.Record.FreqHz != 50.02 || r.AgeS != 7 || r.Record.Channels["ia"].TDDPct != nil {
		t.Errorf("3s level = %+v, want freq 50.02, age 7 s, null ia tdd_pct", r)
	}
	// IEEE 519-2014 Table 1 (≤ 1 kV: 5 % / 8 %) and Table 2 row 20<50
	// (ISC/IL = 6100/160 = 38: 7 % for 3 ≤ h < 11, TDD 8 %), REFERENCE.md §1.3, §1.5.
	l := d.Limits
	if l.VIndiv != 5 || l.VTHD != 8 || l.Row != "20<50" || l.TDD != 8 || len(l.Current) != 51 || l.Current[5] != 7 || l.Current[11] != 3.5 || l.Current[4] != 7*0.25 {
		t.Errorf("limits = %+v", l)
	}
	if d.EventsNote == "" {
		t.Error("an empty event list comes without its reason")
	}
}

func TestPageSelfContained(t *testing.T) {
	url, _, _ := start(t)
	body, hdr := get(t, url+"/")
	if !strings.HasPrefix(hdr.Get("Content-Type"), "text/html") {
		t.Errorf("Content-Type %q", hdr.Get("Content-Type"))
	}
	for _, bad := range []string{"http://", "https://", "//cdn", "<link ", "src=\""} {
		if strings.Contains(strings.ReplaceAll(body, "http://www.w3.org/2000/svg", ""), bad) {
			t.Errorf("status page refers to an external asset (%q); it must be self-contained", bad)
		}
	}
	for _, w := range []string{"qualified personnel", "not a protective device", "open-circuit a loaded CT", "point of common coupling"} {
		if !strings.Contains(body, w) {
			t.Errorf("status page lacks the caution %q", w)
		}
	}
}
