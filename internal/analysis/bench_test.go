package analysis_test

import (
	"bufio"
	"context"
	"fmt"
	"math/rand/v2"
	"os"
	"path/filepath"
	"sync"
	"testing"
	"time"

	"ebb/internal/analysis"
	"ebb/internal/civil"
	"ebb/internal/store"
)

const (
	benchOrders    = 1_000_000
	benchCustomers = 200_000
)

// benchDir holds the generated benchmark file for the whole test binary
// (a benchmark function runs several times, each with its own TempDir);
// TestMain removes it.
var benchDir string

func TestMain(m *testing.M) {
	code := m.Run()
	if benchDir != "" {
		os.RemoveAll(benchDir)
	}
	os.Exit(code)
}

var benchFile = sync.OnceValues(func() (string, error) {
	dir, err := os.MkdirTemp("", "ebb-bench-")
	if err != nil {
		return "", err
	}
	benchDir = dir
	path := filepath.Join(dir, "orders-1m.csv")
	f, err := os.Create(path)
	if err != nil {
		return "", err
	}
	w := bufio.NewWriterSize(f, 1<<20)
	rng := rand.New(rand.NewPCG(20261201, 1))
	first := civil.FromYMD(2022, 1, 1)
	days := int(civil.FromYMD(2026, 11, 30) - first + 1) // all before the benchmark's today
	// Every customer orders at least once (first a random permutation of
	// all of them), then customers are drawn at random.
	perm := rng.Perm(benchCustomers)
	fmt.Fprintln(w, "customer_id,order_date,amount,order_id")
	for i := range benchOrders {
		c := rng.IntN(benchCustomers)
		if i < benchCustomers {
			c = perm[i]
		}
		day := first + civil.Date(rng.IntN(days))
		cents := 100 + rng.IntN(50_000)
		fmt.Fprintf(w, "K%07d,%s,%d.%02d,ORD%08d\n", c, day, cents/100, cents%100, i)
	}
	if err := w.Flush(); err != nil {
		f.Close()
		return "", err
	}
	return path, f.Close()
})

// BenchmarkImport1M imports 1,000,000 orders of 200,000 customers into a
// fresh store per iteration.
func BenchmarkImport1M(b *testing.B) {
	if testing.Short() {
		b.Skip("generates and imports a 1M-row file; skipped under -short")
	}
	path, err := benchFile()
	if err != nil {
		b.Fatal(err)
	}
	fi, err := os.Stat(path)
	if err != nil {
		b.Fatal(err)
	}
	ctx := context.Background()
	b.ReportAllocs()
	b.ResetTimer()
	for i := 0; i < b.N; i++ {
		b.StopTimer()
		st, err := store.Open(ctx, filepath.Join(b.TempDir(), fmt.Sprintf("bench%d.db", i)), store.Options{Now: func() time.Time { return now }})
		if err != nil {
			b.Fatal(err)
		}
		f, err := os.Open(path)
		if err != nil {
			b.Fatal(err)
		}
		b.StartTimer()
		res, err := analysis.Import(ctx, st, analysis.ImportRequest{
			Dataset: "bench", Orders: analysis.Source{Name: "orders-1m.csv", R: f, Size: fi.Size()}, Now: now,
		})
		b.StopTimer()
		if err != nil {
			b.Fatal(err)
		}
		if res.Orders.Accepted != benchOrders || res.CustomersAdded != benchCustomers {
			b.Fatalf("accepted %d orders of %d customers, want %d of %d",
				res.Orders.Accepted, res.CustomersAdded, benchOrders, benchCustomers)
		}
		f.Close()
		st.Close()
		b.StartTimer()
	}
	b.StopTimer()
	b.ReportMetric(float64(benchOrders)*float64(b.N)/b.Elapsed().Seconds(), "rows/s")
}
