package analysis_test

import (
	"bytes"
	"context"
	"path/filepath"
	"testing"
	"time"

	"ebb/demo"
	"ebb/internal/analysis"
	"ebb/internal/history"
	"ebb/internal/store"
)

// BenchmarkTrain1M is the training run of DESIGN's budget on the demo
// business grown to 200k customers (about 970k orders): 100 snapshots, the
// default split, baseline, logistic, trees and BG/NBD, evaluation with
// intervals on a 200k-row test sample, refit. It reports each stage's
// seconds, the rows before and after the cap, and each model's test ROC
// AUC. Peak memory: run the test binary under /usr/bin/time -v.
func BenchmarkTrain1M(b *testing.B) {
	if testing.Short() {
		b.Skip("imports a 1M-order demo; skipped under -short")
	}
	ctx := context.Background()
	st, id, now := bigDemo(b, 200_000, 90)
	cache := history.NewCache(1)
	b.ResetTimer()
	for range b.N {
		_, rep, err := analysis.Train(ctx, st, cache, id, analysis.TrainOptions{Clock: time.Now}, "bench", now, nil)
		if err != nil {
			b.Fatal(err)
		}
		for stage, s := range rep.Seconds {
			b.ReportMetric(s, stage+"_s")
		}
		b.ReportMetric(float64(rep.RowsBeforeCap), "rows_before_cap")
		b.ReportMetric(float64(rep.Rows["train"]+rep.Rows["validation"]+rep.Rows["test"]+rep.Rows["dropped"]), "rows")
		b.ReportMetric(float64(rep.Rows["test_evaluated"]), "test_rows")
		for _, m := range rep.Models {
			b.ReportMetric(m.ROCAUC.Estimate, "auc_"+m.Name)
		}
	}
}

// bigDemo imports the demo business grown to the given number of customers
// (about five orders each), with its customers file, into a fresh store,
// and saves a churn definition of windowDays.
func bigDemo(b *testing.B, customers, windowDays int) (*store.Store, int64, time.Time) {
	b.Helper()
	ctx := context.Background()
	now := time.Date(2026, 12, 1, 0, 0, 0, 0, time.UTC)
	st, err := store.Open(ctx, filepath.Join(b.TempDir(), "bench.db"), store.Options{Now: func() time.Time { return now }})
	if err != nil {
		b.Fatal(err)
	}
	b.Cleanup(func() { st.Close() })
	biz := demo.Generate(demo.Options{Customers: customers})
	var orders, custs bytes.Buffer
	biz.WriteOrders(&orders)
	biz.WriteCustomers(&custs)
	res, err := analysis.Import(ctx, st, analysis.ImportRequest{Dataset: "big", Orders: analysis.Source{Name: "orders.csv", R: &orders},
		Customers: &analysis.Source{Name: "customers.csv", R: &custs}, Now: now})
	if err != nil {
		b.Fatal(err)
	}
	if _, err := analysis.SaveDefinition(ctx, st, res.Import.DatasetID, analysis.DefinitionInput{WindowDays: windowDays, Rationale: "benchmark"}, "bench", now); err != nil {
		b.Fatal(err)
	}
	return st, res.Import.DatasetID, now
}
