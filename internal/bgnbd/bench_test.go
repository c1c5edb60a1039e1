package bgnbd

import "testing"

// BenchmarkFit200k fits 200,000 simulated customers (days; seeded) from the
// default starting points.
func BenchmarkFit200k(b *testing.B) {
	cs := customersOf(simulate(42, truth, 200000, 30, 730, 0))
	b.ResetTimer()
	for b.Loop() {
		_, info, err := Fit(cs, FitOptions{})
		if err != nil {
			b.Fatal(err)
		}
		if !info.Converged {
			b.Fatalf("not converged: %+v", info)
		}
	}
}

// BenchmarkScore200k scores 200,000 customers: P(alive), P(no purchase in
// 90 days) and E[Y(90)] each.
func BenchmarkScore200k(b *testing.B) {
	cs := customersOf(simulate(42, truth, 200000, 30, 730, 0))
	b.ResetTimer()
	var sink float64
	for b.Loop() {
		for _, c := range cs {
			sink += PAlive(truth, c) + PNoPurchase(truth, c, 90) + ExpectedPurchases(truth, c, 90)
		}
	}
	_ = sink
}
