package gaps

import (
	"math/rand/v2"
	"testing"

	"ebb/internal/civil"
	"ebb/internal/history"
)

// benchHistory is 1M orders of 200k customers over about three years, with
// exponential gaps of a customer-specific mean (generated, not real data).
func benchHistory(b *testing.B) *history.History {
	b.Helper()
	rng := rand.New(rand.NewPCG(7, 11))
	const customers, orders = 200_000, 1_000_000
	start := civil.FromYMD(2023, 11, 1)
	end := start + 1095
	bl := history.NewBuilder(customers, orders)
	n := 0
	for c := int32(0); c < customers; c++ {
		d := start + civil.Date(rng.IntN(1000))
		mean := 10 + rng.Float64()*150
		for k := 0; k < 10 && d <= end && n < orders; k++ {
			bl.Add(c, d, 20+rng.Float64()*40, true)
			n++
			d += civil.Date(1 + rng.ExpFloat64()*mean)
		}
	}
	h, err := bl.Build(end)
	if err != nil {
		b.Fatal(err)
	}
	return h
}

// BenchmarkWindow is the window step of the design's budget: all methods
// (with a 200-replicate bootstrap) and the full sensitivity table, with the
// history already loaded.
func BenchmarkWindow(b *testing.B) {
	h := benchHistory(b)
	b.ResetTimer()
	for range b.N {
		if _, err := Derive(h, Options{Seed: 1}); err != nil {
			b.Fatal(err)
		}
		if _, err := DeriveSecondOrder(h, Options{Seed: 1}); err != nil {
			b.Fatal(err)
		}
		Sensitivity(h, 365, 365)
	}
}
