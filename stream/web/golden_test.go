package web

import (
	"flag"
	"io"
	"math"
	"net/http"
	"net/http/httptest"
	"os"
	"path/filepath"
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

var update = flag.Bool("update", false, "rewrite testdata/*.golden from the running code")

// goldenCase is one invented gateway whose /metrics body is kept in
// testdata: the six-channel wye bus of the other tests, and a single-phase
// bus with two circuits.
type goldenCase struct {
	name  string
	setup func(t testing.TB) *metrics.Setup
	site  string
}

var goldenCases = []goldenCase{
	// The site name carries a quote, a backslash and a newline: label
	// escaping (Prometheus text format 0.0.4, from memory).
	{"wye", metricstest.Wye, "north \"weir\"\\dc2\nb"},
	{"circuits", circuitSetup, "south-lock"},
}

func circuitSetup(t testing.TB) *metrics.Setup {
	t.Helper()
	ch := []metrics.Channel{{Name: "va", Kind: metrics.Voltage, Phase: 'a'}, {Name: "ia", Kind: metrics.Current, Phase: 'a'}, {Name: "i2", Kind: metrics.Current, Phase: 'a'}}
	s, err := metrics.NewSetup(metrics.Setup{Channels: ch, Orders: []int{1, 3, 5}, Wiring: metrics.SinglePhase, NominalV: 230, ILA: 100, Reference: -1,
		Circuits: []metrics.Circuit{{Name: "incomer", Currents: []int{1}}, {Name: "drive1", Currents: []int{2}, ILA: 40}}})
	if err != nil {
		t.Fatal(err)
	}
	return s
}

// fill gives every float of r a distinct invented value derived from seed
// (so a value landing on the wrong series shows), with a few nulls, an
// infinity, a negative zero and a large and a tiny number to exercise the
// number format. Not physical values: a format check.
func fill(r *metrics.Record, seed float64) {
	k := seed
	next := func() float64 { k += 1.25; return k }
	r.FreqHz = 49.98 + seed/1000
	fillPower := func(x *metrics.Record) {
		for i := range x.Phases {
			p := &x.Phases[i]
			p.P, p.Q1, p.S, p.PF, p.DPF = next()*100, -next(), next()*100, 0.9, 0.95+float64(i)/100
		}
		x.Total = metrics.TotalValues{P: next() * 300, Q1: metrics.Null(), S: next() * 300, Se: 1.5e9, Ve: 230.125, Ie: 4.7e-7, PF: math.Copysign(0, -1), DPF: 1}
	}
	fillPower(r)
	for _, c := range r.Circuits {
		if c.Rec != nil {
			fillPower(c.Rec)
		}
	}
	for i := range r.Channels {
		c := &r.Channels[i]
		c.RMS, c.THDPct, c.THDH50Pct, c.TDDPct, c.TDDH50Pct = 200+next(), next()/10, next()/10, next()/10, next()/10
	}
	r.Channels[0].THDPct = math.Inf(1)
	if len(r.Channels) > 1 {
		r.Channels[1].THDH50Pct = metrics.Null()
	}
	r.UnbV, r.UnbI = 0.39, metrics.Null()
}

// goldenBody builds the server for gc, puts a 3 s and a 10 min record,
// alarms, health and energy on the board and returns the /metrics body
// and Content-Type.
func goldenBody(t *testing.T, gc goldenCase) (string, string) {
	t.Helper()
	s := gc.setup(t)
	now := time.Date(2026, 3, 1, 10, 10, 0, 0, time.UTC)
	b := live.New(s, func() time.Time { return now }, func() live.Health {
		return live.Health{RecordsStored: 812, RecordsDropped: 3, OutboxDepth: 17, StoreBytes: 1 << 20, StoreErrors: 2, Windows: 12000, MQTTConnected: gc.name == "wye"}
	})
	for i, iv := range live.Levels() {
		r := metrics.NewRecord(s)
		r.Interval, r.Start = iv, now.Add(-time.Duration(i+1)*time.Second)
		fill(r, float64(10*i))
		b.Put(r, []string{"thd-va"})
		now = now.Add(1500 * time.Millisecond)
	}
	b.SetEnergy(live.Energy{Readings: []energy.Reading{
		{Circuit: "incomer", Counters: energy.Counters{ImportWh: 1000, ExportWh: 2.5, VarhQ: [4]float64{1, 0, 0.125, 2}}},
		{Circuit: "drive1", Counters: energy.Counters{ImportWh: 1e12, VarhQ: [4]float64{3, 4, 5, 6}}}},
		Demand:   energy.Demand{A: [3]float64{120.4, math.NaN(), 121}, W: 71460, Month: energy.Month{MaxA: [3]float64{150, math.NaN(), 151}, MaxW: 80000}},
		ILConfig: 160, Estimate: energy.IL{A: 140.5}})
	srv, err := New(Config{Addr: "127.0.0.1:0", Board: b, Site: gc.site, Gateway: "gw1",
		Alarms: []Alarm{{"thd-va", "warning"}, {"pf-total", "info"}, {"z\"odd\\", "critical"}}})
	if err != nil {
		t.Fatal(err)
	}
	rec := httptest.NewRecorder()
	srv.srv.Handler.ServeHTTP(rec, httptest.NewRequest(http.MethodGet, "/metrics", nil))
	if rec.Code != http.StatusOK {
		t.Fatalf("/metrics: %d %s", rec.Code, rec.Body)
	}
	return rec.Body.String(), rec.Header().Get("Content-Type")
}

// TestMetricsGolden: /metrics is byte for byte the kept body of each case
// (captured from the client_golang registry the server used before the
// hand-written exposition; src: that capture, testdata/*.golden).
func TestMetricsGolden(t *testing.T) {
	for _, gc := range goldenCases {
		t.Run(gc.name, func(t *testing.T) {
			body, ct := goldenBody(t, gc)
			path := filepath.Join("testdata", "metrics-"+gc.name+".golden")
			if *update {
				if err := os.WriteFile(path, []byte(body), 0o644); err != nil {
					t.Fatal(err)
				}
				t.Logf("Content-Type %q", ct)
				return
			}
			want, err := os.ReadFile(path)
			if err != nil {
				t.Fatal(err)
			}
			if ct != expoContentType {
				t.Errorf("Content-Type %q, want %q (the client library's, kept)", ct, expoContentType)
			}
			compareFamilies(t, string(want), body)
			if body != string(want) {
				t.Errorf("/metrics differs from %s:\n%s", path, body)
			}
		})
	}
}

// parseText parses a body with the Prometheus library's text parser, which
// refuses a second HELP or TYPE of one name and malformed lines.
func parseText(t *testing.T, body string) map[string]*dto.MetricFamily {
	t.Helper()
	p := expfmt.NewTextParser(model.UTF8Validation)
	fams, err := p.TextToMetricFamilies(strings.NewReader(body))
	if err != nil {
		t.Fatalf("not valid Prometheus text: %v", err)
	}
	return fams
}

// compareFamilies reports, family by family, where got differs from want:
// a missing or extra family, its HELP and TYPE, and each series' labels
// and value (NaN equal to NaN).
func compareFamilies(t *testing.T, want, got string) {
	t.Helper()
	w, g := parseText(t, want), parseText(t, got)
	for name := range g {
		if w[name] == nil {
			t.Errorf("extra family %s", name)
		}
	}
	for name, wf := range w {
		gf := g[name]
		if gf == nil {
			t.Errorf("family %s missing", name)
			continue
		}
		if gf.GetHelp() != wf.GetHelp() || gf.GetType() != wf.GetType() {
			t.Errorf("%s: HELP %q TYPE %v, want %q %v", name, gf.GetHelp(), gf.GetType(), wf.GetHelp(), wf.GetType())
		}
		series := func(f *dto.MetricFamily) map[string]float64 {
			m := map[string]float64{}
			for _, x := range f.Metric {
				var key strings.Builder
				for _, l := range x.Label {
					key.WriteString(l.GetName() + "=" + l.GetValue() + ";")
				}
				v := x.GetGauge().GetValue()
				if x.Counter != nil {
					v = x.GetCounter().GetValue()
				}
				m[key.String()] = v
			}
			return m
		}
		ws, gs := series(wf), series(gf)
		for k, v := range ws {
			gv, ok := gs[k]
			switch {
			case !ok:
				t.Errorf("%s{%s} missing", name, k)
			case gv != v && !(math.IsNaN(gv) && math.IsNaN(v)):
				t.Errorf("%s{%s} = %v, want %v", name, k, gv, v)
			}
		}
		for k := range gs {
			if _, ok := ws[k]; !ok {
				t.Errorf("extra series %s{%s}", name, k)
			}
		}
	}
}

// TestMetricsNegotiation: whatever a scraper asks for (Prometheus asks for
// protobuf first and gzip, from memory), the answer is the uncompressed
// text format, which every Prometheus accepts (README integration table).
func TestMetricsNegotiation(t *testing.T) {
	url, b, _ := start(t)
	b.Put(record(b.Setup()), nil)
	req, err := http.NewRequest(http.MethodGet, url+"/metrics", nil)
	if err != nil {
		t.Fatal(err)
	}
	req.Header.Set("Accept", "application/vnd.google.protobuf;proto=io.prometheus.client.MetricFamily;encoding=delimited;q=0.7,text/plain;version=0.0.4;q=0.3")
	req.Header.Set("Accept-Encoding", "gzip")
	resp, err := (&http.Transport{DisableCompression: true}).RoundTrip(req)
	if err != nil {
		t.Fatal(err)
	}
	defer resp.Body.Close()
	body, err := io.ReadAll(resp.Body)
	if err != nil {
		t.Fatal(err)
	}
	if ct, ce := resp.Header.Get("Content-Type"), resp.Header.Get("Content-Encoding"); ct != expoContentType || ce != "" {
		t.Errorf("Content-Type %q, Content-Encoding %q; want %q, none", ct, ce, expoContentType)
	}
	if fams := parseText(t, string(body)); fams["gridloupe_frequency_hertz"] == nil {
		t.Errorf("no gridloupe_frequency_hertz in %.300s", body)
	}
}
