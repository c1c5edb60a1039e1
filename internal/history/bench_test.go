package history

import (
	"math"
	"math/rand/v2"
	"testing"

	"ebb/internal/civil"
)

// benchRows are 1,000,000 orders of 200,000 customers over two years in
// random order (neither by customer nor by day), a tenth without amount:
// the shape of the design's budget figures (DESIGN.md §3).
func benchRows(b *testing.B) (rows []row, customers int) {
	b.Helper()
	const orders = 1_000_000
	customers = 200_000
	rng := rand.New(rand.NewPCG(1, 2))
	start := civil.FromYMD(2023, 1, 1)
	rows = make([]row, orders)
	for i := range rows {
		rows[i] = row{int32(rng.IntN(customers)), start + civil.Date(rng.IntN(730)), float64(rng.IntN(10000)) / 100}
		if rng.IntN(10) == 0 {
			rows[i].amount = math.NaN()
		}
	}
	return rows, customers
}

// BenchmarkBuild adds 1M shuffled orders of 200k customers to a Builder and
// builds the History. It reports the History's memory per raw order
// (bytes/order, from History.Bytes).
func BenchmarkBuild(b *testing.B) {
	rows, customers := benchRows(b)
	b.ReportAllocs()
	var h *History
	for b.Loop() {
		bl := NewBuilder(customers, len(rows))
		for _, r := range rows {
			bl.Add(r.customer, r.day, r.amount, r.amount == r.amount)
		}
		var err error
		if h, err = bl.Build(civil.FromYMD(2024, 12, 31)); err != nil {
			b.Fatal(err)
		}
	}
	if h.Orders() != len(rows) || h.Customers() != customers {
		b.Fatalf("built %d orders of %d customers, want %d of %d", h.Orders(), h.Customers(), len(rows), customers)
	}
	b.ReportMetric(float64(h.Bytes())/float64(h.Orders()), "bytes/order")
	b.ReportMetric(float64(h.OrderDays())/float64(h.Orders()), "days/order")
}

// BenchmarkQueries runs the queries a snapshot's features make, for every
// customer at one date t: recency, order days in four windows, spend in
// one, order days through t. It reports the time per customer.
func BenchmarkQueries(b *testing.B) {
	rows, customers := benchRows(b)
	bl := NewBuilder(customers, len(rows))
	for _, r := range rows {
		bl.Add(r.customer, r.day, r.amount, r.amount == r.amount)
	}
	h, err := bl.Build(civil.FromYMD(2024, 12, 31))
	if err != nil {
		b.Fatal(err)
	}
	t := civil.FromYMD(2024, 6, 30)
	b.ReportAllocs()
	sink := 0.0
	for b.Loop() {
		for c := range customers {
			if last, ok := h.LastOnOrBefore(c, t); ok {
				sink += float64(t - last)
			}
			for _, k := range [...]civil.Date{30, 90, 180, 365} {
				sink += float64(h.CountIn(c, t-k, t))
			}
			sink += h.AmountIn(c, t-180, t)
			sink += float64(h.CountThrough(c, t))
		}
	}
	b.ReportMetric(float64(b.Elapsed().Nanoseconds())/float64(b.N)/float64(customers), "ns/customer")
	if sink == 0 {
		b.Fatal("the queries found nothing")
	}
}
