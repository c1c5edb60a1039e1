package ingest

import (
	"bytes"
	"context"
	"fmt"
	"math/rand/v2"
	"testing"
)

// BenchmarkReadOrders parses and validates 1M generated orders (200k
// customers) without storing them: the parsing share of the import budget.
func BenchmarkReadOrders(b *testing.B) {
	var buf bytes.Buffer
	rng := rand.New(rand.NewPCG(1, 2))
	buf.WriteString("customer_id,order_date,amount,order_id\n")
	const rows = 1_000_000
	for i := 0; i < rows; i++ {
		fmt.Fprintf(&buf, "K%07d,2024-%02d-%02d,%d.%02d,R%08d\n", rng.IntN(200_000), 1+rng.IntN(12), 1+rng.IntN(28), rng.IntN(200), rng.IntN(100), i)
	}
	data := buf.Bytes()
	b.SetBytes(int64(len(data)))
	b.ResetTimer()
	for range b.N {
		_, err := ReadOrders(context.Background(), bytes.NewReader(data), OrderOptions{
			File: "bench.csv", Keys: NewKeys(nil), Refs: NewRefSet(), Today: today,
		}, func(Batch) error { return nil })
		if err != nil {
			b.Fatal(err)
		}
	}
	b.ReportMetric(float64(rows)*float64(b.N)/b.Elapsed().Seconds(), "rows/s")
}
