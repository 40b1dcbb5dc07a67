package metrics

import "testing"

func BenchmarkCompute(b *testing.B) {
	for _, c := range []struct {
		name   string
		orders []int
	}{{"orders=50", allOrders()}, {"orders=4", []int{1, 5, 7, 11}}} {
		b.Run(c.name, func(b *testing.B) {
			s := wyeSetup(b, false, c.orders)
			ws := append(balancedV(230), block120(100), shift(block120(100), 120*deg), shift(block120(100), -120*deg))
			in := inputFor(b, s, waves(2000, ws...))
			r := NewRecord(s)
			b.ReportAllocs()
			for b.Loop() {
				Compute(s, in, r)
			}
			if IsNull(r.Total.PF) {
				b.Fatal("total pf null")
			}
		})
	}
}

func BenchmarkAggregator(b *testing.B) {
	s := wyeSetup(b, false, allOrders())
	ws := append(balancedV(230), block120(100), shift(block120(100), 120*deg), shift(block120(100), -120*deg))
	r := NewRecord(s)
	Compute(s, inputFor(b, s, waves(2000, ws...)), r)
	a := NewAggregator(s)
	out := NewRecord(s)
	b.ReportAllocs()
	for b.Loop() {
		a.Add(r)
		a.Result(out)
	}
	if a.Count() == 0 || IsNull(out.Total.PF) {
		b.Fatal("no aggregate")
	}
}
