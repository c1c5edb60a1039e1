package lists

import (
	"io"
	"runtime"
	"strconv"
	"testing"
)

// benchRows is 100k list rows of typical width (generated, not real data).
func benchRows() []Row {
	rows := make([]Row, 100_000)
	for i := range rows {
		p := float64(i%10_000) / 10_000
		rows[i] = Row{
			Key:         "cust-" + strconv.Itoa(i),
			Email:       "customer" + strconv.Itoa(i) + "@example.com",
			Probability: p,
			Band:        DefaultBands.Of(p),
			Reasons:     "no order for 74 days, usually orders every 30 days; 2 order days in the last 6 months, 3 fewer than in the 6 months before; customer for 14 months",
			ListDate:    testDate,
			Attrs:       []string{"north", "pro"},
		}
	}
	return rows
}

// BenchmarkWriteCSV100k is the CSV export budget of the design (100k rows
// in ≤ 1 s, flat memory); allocs/row is the
// allocation count per row written, which must not grow with the rows.
func BenchmarkWriteCSV100k(b *testing.B) {
	rows := benchRows()
	b.ReportAllocs()
	var before, after runtime.MemStats
	runtime.ReadMemStats(&before)
	b.ResetTimer()
	for range b.N {
		w, err := NewCSVWriter(io.Discard, testAttrNames)
		if err != nil {
			b.Fatal(err)
		}
		for _, r := range rows {
			if err := w.Write(r); err != nil {
				b.Fatal(err)
			}
		}
		if err := w.Flush(); err != nil {
			b.Fatal(err)
		}
	}
	b.StopTimer()
	runtime.ReadMemStats(&after)
	b.ReportMetric(float64(after.Mallocs-before.Mallocs)/float64(b.N*len(rows)), "allocs/row")
}

// BenchmarkWriteJSON100k is the JSON form of the export benchmark.
func BenchmarkWriteJSON100k(b *testing.B) {
	rows := benchRows()
	b.ReportAllocs()
	b.ResetTimer()
	for range b.N {
		w, err := NewJSONWriter(io.Discard, testDate, testAttrNames)
		if err != nil {
			b.Fatal(err)
		}
		for _, r := range rows {
			if err := w.Write(r); err != nil {
				b.Fatal(err)
			}
		}
		if err := w.Close(); err != nil {
			b.Fatal(err)
		}
	}
}

// BenchmarkHoldout200k decides holdout membership for 200k customers, the
// design's benchmark population.
func BenchmarkHoldout200k(b *testing.B) {
	keys := make([]string, 200_000)
	for i := range keys {
		keys[i] = "cust-" + strconv.Itoa(i)
	}
	h := Holdout{Salt: testSalt, Share: 0.1, PeriodDays: 91}
	b.ResetTimer()
	for range b.N {
		in := h.Members(9)
		for _, k := range keys {
			in(k)
		}
	}
}

// BenchmarkReasons200k words three reasons for each of 200k customers
// (part of the "scoring with reasons" budget).
func BenchmarkReasons200k(b *testing.B) {
	names := allFeatures
	values := []float64{74, 0, 0, 2, 7, 12, 430, 30.4, 21, 2.43, 66.2, 33.1, -3, 0.35}
	contrib := []float64{0.5, 0.2, 0.1, 0.3, 0.1, 0.05, -0.6, 0.1, -0.1, 0.4, 0.1, 0.02, 0.4, 0.25}
	b.ReportAllocs()
	b.ResetTimer()
	for range b.N {
		for range 200_000 {
			JoinReasons(Reasons(names, values, contrib, 3))
		}
	}
}
