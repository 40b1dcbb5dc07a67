package live

import (
	"math"
	"strconv"
	"time"

	"github.com/gridloupe/gridloupe/metrics/energy"
	"github.com/gridloupe/gridloupe/stream/encode"
)

// EffectiveIL is il_a when configured, else the estimate, with its basis.
func (e Energy) EffectiveIL() (float64, string) {
	if e.ILConfig > 0 {
		return e.ILConfig, "il_a from the config"
	}
	return e.Estimate.A, e.Estimate.Basis
}

// AppendEnergyJSON appends e as the JSON object the MQTT …/energy message
// and /api/latest carry: {"circuits":{…},"demand":{…},"il":{…}}.
func AppendEnergyJSON(b []byte, e Energy) []byte {
	b = append(b, `{"circuits":{`...)
	for i, r := range e.Readings {
		if i > 0 {
			b = append(b, ',')
		}
		b = encode.AppendString(b, r.Circuit)
		b = append(b, `:{"import_kwh":`...)
		b = jnum(b, r.ImportWh/1000)
		b = append(b, `,"export_kwh":`...)
		b = jnum(b, r.ExportWh/1000)
		for q, v := range r.VarhQ {
			b = append(b, `,"kvarh_q`...)
			b = strconv.AppendInt(b, int64(q+1), 10)
			b = append(b, `":`...)
			b = jnum(b, v/1000)
		}
		b = append(b, '}')
	}
	d := e.Demand
	b = append(b, `},"demand":{"interval_s":`...)
	b = strconv.AppendInt(b, int64(d.Interval/time.Second), 10)
	b = append(b, `,"method":"`...)
	if d.Method == energy.Sliding {
		b = append(b, "sliding"...)
	} else {
		b = append(b, "fixed"...)
	}
	b = append(b, `","end":`...)
	if d.End.IsZero() {
		b = append(b, "null"...)
	} else {
		b = append(b, '"')
		b = encode.AppendTime(b, d.End)
		b = append(b, '"')
	}
	b = append(b, `,"phases":{`...)
	for p, ph := range []string{"a", "b", "c"} {
		if p > 0 {
			b = append(b, ',')
		}
		b = append(b, `"`+ph+`":{"i_a":`...)
		b = jnum(b, d.A[p])
		b = append(b, `,"month_max_a":`...)
		b = jnum(b, d.Month.MaxA[p])
		b = append(b, '}')
	}
	b = append(b, `},"p_w":`...)
	b = jnum(b, d.W)
	b = append(b, `,"month":`...)
	b = encode.AppendString(b, d.Month.Month)
	b = append(b, `,"month_max_p_w":`...)
	b = jnum(b, d.Month.MaxW)
	b = append(b, `},"il":{"a":`...)
	il, basis := e.EffectiveIL()
	b = jnum(b, il)
	b = append(b, `,"basis":`...)
	b = encode.AppendString(b, basis)
	b = append(b, `,"estimate_a":`...)
	b = jnum(b, e.Estimate.A)
	return append(b, "}}"...)
}

func jnum(b []byte, v float64) []byte {
	if math.IsNaN(v) || math.IsInf(v, 0) {
		return append(b, "null"...)
	}
	return encode.AppendNumber(b, v)
}
