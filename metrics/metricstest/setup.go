package metricstest

import (
	"testing"

	"github.com/gridloupe/gridloupe/metrics"
)

// Wye returns the setup of a three-phase wye cabinet with one voltage and
// one current channel per phase (va, vb, vc, ia, ib, ic), all orders 1–50,
// 230 V nominal and an IL of 160 A: the invented North Weir DC-2 cabinet.
// It fails t when the setup is refused.
func Wye(t testing.TB) *metrics.Setup {
	t.Helper()
	orders := make([]int, 50)
	for i := range orders {
		orders[i] = i + 1
	}
	s, err := metrics.NewSetup(metrics.Setup{
		Channels: []metrics.Channel{
			{Name: "va", Kind: metrics.Voltage, Phase: 'a'}, {Name: "vb", Kind: metrics.Voltage, Phase: 'b'}, {Name: "vc", Kind: metrics.Voltage, Phase: 'c'},
			{Name: "ia", Kind: metrics.Current, Phase: 'a'}, {Name: "ib", Kind: metrics.Current, Phase: 'b'}, {Name: "ic", Kind: metrics.Current, Phase: 'c'}},
		Orders: orders, AllOrders: true, Wiring: metrics.Wye, NominalV: 230, ILA: 160})
	if err != nil {
		t.Fatal(err)
	}
	return s
}
