package frame

import (
	"math/rand/v2"
	"strconv"
	"testing"
)

// benchFrame is 1M rows × 12 features, one feature 10% missing.
func benchFrame(b *testing.B) *Frame {
	b.Helper()
	const n, k = 1_000_000, 12
	names := make([]string, k)
	for j := range names {
		names[j] = "f" + strconv.Itoa(j)
	}
	f, err := New(names, n)
	if err != nil {
		b.Fatal(err)
	}
	rng := rand.New(rand.NewPCG(1, 2))
	for j := range k {
		col := f.ColAt(j)
		for i := range col {
			col[i] = rng.NormFloat64()*float64(j+1) + float64(j)
			if j == 3 && rng.Float64() < 0.1 {
				col[i] = Missing
			}
		}
	}
	return f
}

func BenchmarkStandardize1Mx12(b *testing.B) {
	f := benchFrame(b)
	b.ReportAllocs()
	b.ResetTimer()
	for b.Loop() {
		st, err := FitStandardizer(f)
		if err != nil {
			b.Fatal(err)
		}
		if _, err := st.Apply(f); err != nil {
			b.Fatal(err)
		}
	}
}

func BenchmarkSubsetHalf1Mx12(b *testing.B) {
	f := benchFrame(b)
	rows := make([]int, 0, f.Rows()/2)
	for i := 0; i < f.Rows(); i += 2 {
		rows = append(rows, i)
	}
	b.ReportAllocs()
	b.ResetTimer()
	for b.Loop() {
		if _, err := f.Subset(rows); err != nil {
			b.Fatal(err)
		}
	}
}
