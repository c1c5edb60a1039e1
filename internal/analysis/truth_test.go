package analysis_test

import (
	"bytes"
	"context"
	"testing"
	"time"

	"ebb/demo"
	"ebb/internal/analysis"
	"ebb/internal/civil"
	"ebb/internal/history"
)

// trainDemo imports a generated demo business, saves a 90-day definition
// and trains every model with the business's true probabilities attached.
func trainDemo(t *testing.T, customers int) *analysis.TrainReport {
	t.Helper()
	ctx := context.Background()
	now := time.Date(2026, 12, 1, 0, 0, 0, 0, time.UTC)
	st := mustOpenStore(t)
	biz := demo.Generate(demo.Options{Customers: customers})
	var orders bytes.Buffer
	if err := biz.WriteOrders(&orders); err != nil {
		t.Fatal(err)
	}
	res := mustImport(t, st, analysis.ImportRequest{Dataset: "demo", Orders: source("orders.csv", orders.Bytes()), Now: now})
	if _, err := analysis.SaveDefinition(ctx, st, res.Import.DatasetID, analysis.DefinitionInput{WindowDays: 90, Rationale: "test"}, "test", now); err != nil {
		t.Fatal(err)
	}
	truth := biz.Truth()
	opt := analysis.TrainOptions{Bootstrap: 20, Truth: func(key string, day civil.Date, h int) float64 { return truth(key, day.Time(), h) }}
	_, rep, err := analysis.Train(ctx, st, history.NewCache(1), res.Import.DatasetID, opt, "test", now, nil)
	if err != nil {
		t.Fatal(err)
	}
	return rep
}

// On the demo business each model's test AUC stays below the AUC of the
// true probabilities (which know each customer's hidden state), and the
// learned models come within a stated margin of that bound.
func TestModelsApproachTheTruthBound(t *testing.T) {
	rep := trainDemo(t, 10_000)
	if !(rep.TruthROCAUC > 0.5 && rep.TruthROCAUC < 1) {
		t.Fatalf("truth AUC = %v", rep.TruthROCAUC)
	}
	auc := map[string]float64{}
	for _, m := range rep.Models {
		auc[m.Name] = m.ROCAUC.Estimate
		t.Logf("%-9s AUC %.4f  bound %.4f  gap %.4f", m.Name, m.ROCAUC.Estimate, rep.TruthROCAUC, rep.TruthROCAUC-m.ROCAUC.Estimate)
		if m.ROCAUC.Estimate >= rep.TruthROCAUC {
			t.Errorf("%s AUC %.4f reaches the truth bound %.4f: the bound or the evaluation is wrong", m.Name, m.ROCAUC.Estimate, rep.TruthROCAUC)
		}
	}
	// Measured at 10k and 20k customers (seed 1): bound 0.88, logistic,
	// trees and BG/NBD 0.68–0.69, so a gap of about 0.19–0.20; most of it
	// is whether a customer already left after their last order, which no
	// order history reveals. The margin allows 0.03 of sampling noise.
	const margin = 0.23
	for _, name := range []string{"logistic", "trees", "bgnbd"} {
		if gap := rep.TruthROCAUC - auc[name]; gap > margin {
			t.Errorf("%s is %.4f below the truth bound, want at most %.2f", name, gap, margin)
		}
		if auc[name] <= auc["baseline"] {
			t.Errorf("%s AUC %.4f does not beat the recency baseline's %.4f", name, auc[name], auc["baseline"])
		}
	}
}
