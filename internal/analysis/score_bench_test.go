package analysis_test

import (
	"context"
	"io"
	"testing"
	"time"

	"ebb/internal/analysis"
	"ebb/internal/history"
)

// BenchmarkScoreList drafts a list of every eligible customer with the
// trees model and reasons, on the demo business grown to 510k customers
// (about 2.5M orders) and a 120-day window, so that about 200k customers
// are active (the budget's size); then it exports the customers to contact as CSV. It reports the
// active customers scored, the scoring seconds and the export's rows per
// second, without and with an attribute column.
func BenchmarkScoreList(b *testing.B) {
	if testing.Short() {
		b.Skip("imports a 2.5M-order demo; skipped under -short")
	}
	ctx := context.Background()
	st, id, now := bigDemo(b, 510_000, 120)
	cache := history.NewCache(1)
	if _, _, err := analysis.Train(ctx, st, cache, id, analysis.TrainOptions{Models: []string{"trees"}, Bootstrap: 20}, "bench", now, nil); err != nil {
		b.Fatal(err)
	}
	b.ResetTimer()
	for range b.N {
		start := time.Now()
		out, err := analysis.Score(ctx, st, cache, analysis.ScoreRequest{DatasetID: id, Rule: analysis.ListRule{UseThreshold: true}, By: "bench", Now: now}, nil)
		if err != nil {
			b.Fatal(err)
		}
		b.ReportMetric(time.Since(start).Seconds(), "score_s")
		b.ReportMetric(float64(out.Summary.Active), "active")
		l, err := st.ListByID(ctx, out.ListID)
		if err != nil {
			b.Fatal(err)
		}
		// The export with its fixed columns, then with an attribute column
		// (decoded from each customer's stored attributes).
		for _, e := range []struct {
			metric string
			attrs  []string
		}{{"export_rows/s", nil}, {"export_attr_rows/s", []string{"region"}}} {
			start = time.Now()
			if err := analysis.ExportList(ctx, st, l, analysis.ExportCSV, e.attrs, io.Discard); err != nil {
				b.Fatal(err)
			}
			b.ReportMetric(float64(out.Summary.Contact)/time.Since(start).Seconds(), e.metric)
		}
		b.ReportMetric(float64(out.Summary.Contact), "exported")
	}
}
