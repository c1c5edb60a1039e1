package analysis_test

import (
	"context"
	"encoding/json"
	"math"
	"strings"
	"testing"

	"ebb/internal/analysis"
	"ebb/internal/civil"
	"ebb/internal/history"
	"ebb/internal/store"
)

// A hand-built history, worked out by hand. X = H = 30 days, so holdout
// periods last 35 days; period 242 runs from Monday 2024-03-11.
//
// Everyone (A–J, and K) orders on 2024-03-01. Later orders: A 03-20, D 04-01,
// G 03-15, I 03-25, K 06-30 (data_through is 2024-06-30).
//
// List 1, 2024-03-11 (published): A B C D to contact, E F held out, G H I J
// scored. Its window (03-11, 04-10]: A, D, G, I ordered; B C E F H J did
// not. Precision on its holdout: E, F both did not → 2/2 = 100%. Recall:
// 100% × 6 on the list = 6 expected, and H, J did not order among those not
// selected → 6 / (6 + 2) = 75%.
//
// List 2, 2024-03-18 (published, same period): A and G to contact, nobody
// held out → no precision to measure (a sentence instead).
//
// List 3, 2024-06-20 (published): not matured until 2024-07-20.
//
// Campaign effect, each customer once by the week first selected in the
// period: A B C D E F in the week of 03-11 (list 1's outcomes) and G in the
// week of 03-18 (list 2's window (03-18, 04-17]: G did not order). Contacted
// A B C D G: B C G did not reorder → 3/5 = 60%; holdout E F → 2/2 = 100%;
// difference −40 points, too few customers for an interval to mean much.
func TestMeasureHandBuilt(t *testing.T) {
	ctx := context.Background()
	st := mustOpenStore(t)
	orders := "customer_id,order_date\n"
	for _, c := range "ABCDEFGHIJK" {
		orders += string(c) + ",2024-03-01\n"
	}
	orders += "A,2024-03-20\nD,2024-04-01\nG,2024-03-15\nI,2024-03-25\nK,2024-06-30\n"
	res := mustImport(t, st, analysis.ImportRequest{Dataset: "hand", Orders: source("o.csv", []byte(orders)), Now: scoreNow})
	id := res.Import.DatasetID
	if _, err := analysis.SaveDefinition(ctx, st, id, analysis.DefinitionInput{WindowDays: 30, Rationale: "hand"}, "test", scoreNow); err != nil {
		t.Fatal(err)
	}
	d := mustDataset(t, st, "hand")
	def, _ := st.CurrentDefinition(ctx, id)
	_, models, err := st.InsertTrainingRun(ctx, store.TrainingRun{DatasetID: id, VersionID: d.Version, DefinitionID: def.ID, Options: []byte("{}"),
		Report: []byte("{}"), CreatedBy: "test", CreatedAt: scoreNow}, []store.StoredModel{{Name: "logistic", Kind: "logistic", Model: []byte("{}"), Summary: []byte("{}")}}, true)
	if err != nil {
		t.Fatal(err)
	}
	keys, _ := st.CustomerKeys(ctx, id)
	idOf := map[string]int32{}
	for i, k := range keys {
		idOf[k] = int32(i)
	}
	publish := func(asOf string, statuses map[string]int) int64 {
		t.Helper()
		day, _ := civil.Parse(asOf)
		sum, _ := json.Marshal(analysis.ListSummary{Model: "logistic", ModelID: models[0], HorizonDays: 30, WindowDays: 30, HoldoutShare: 0.1, ExpectedPrecision: 0.5})
		var rows []store.ListRow
		for i, k := range "ABCDEFGHIJ" {
			rows = append(rows, store.ListRow{Rank: i + 1, Customer: idOf[string(k)], Probability: 0.9 - 0.05*float64(i), Band: 2, Status: statuses[string(k)], Reasons: "x"})
		}
		lid, err := st.InsertList(ctx, store.List{DatasetID: id, VersionID: d.Version, ModelID: models[0], AsOf: day, DataThrough: d.DataThrough(),
			Summary: sum, CreatedBy: "test", CreatedAt: scoreNow}, rows)
		if err != nil {
			t.Fatal(err)
		}
		if err := st.PublishList(ctx, lid, "test", scoreNow); err != nil {
			t.Fatal(err)
		}
		return lid
	}
	c, h := store.RowContact, store.RowHoldout
	l1 := publish("2024-03-11", map[string]int{"A": c, "B": c, "C": c, "D": c, "E": h, "F": h})
	l2 := publish("2024-03-18", map[string]int{"A": c, "G": c})
	l3 := publish("2024-06-20", map[string]int{"A": c})

	rep, err := analysis.Measure(ctx, st, history.NewCache(1), id, scoreNow, nil)
	if err != nil {
		t.Fatal(err)
	}
	if len(rep.Lists) != 3 || rep.Lists[0].ListID != l3 || rep.Lists[1].ListID != l2 || rep.Lists[2].ListID != l1 {
		t.Fatalf("lists %+v", rep.Lists)
	}
	if lo := rep.Lists[0]; lo.Matured || lo.ReadyOn != "2024-07-20" || !strings.Contains(lo.Note, "2024-07-20") {
		t.Errorf("list 3: %+v", lo)
	}
	if lo := rep.Lists[1]; !lo.Matured || lo.Accuracy != nil || !strings.Contains(lo.Note, "holdout") {
		t.Errorf("list 2 (no holdout): %+v", lo)
	}
	acc := rep.Lists[2].Accuracy
	if acc == nil {
		t.Fatalf("list 1 has no accuracy: %s", rep.Lists[2].Note)
	}
	if acc.Precision.N != 2 || acc.Precision.X != 2 || acc.ListSize != 6 || acc.MissedNoReorder != 2 || math.Abs(acc.Recall-0.75) > 1e-12 {
		t.Errorf("list 1 accuracy: precision %+v, size %d, missed %d, recall %v", acc.Precision, acc.ListSize, acc.MissedNoReorder, acc.Recall)
	}
	e := rep.Effect
	if e == nil {
		t.Fatal("no effect")
	}
	o := e.Overall
	if o.Contacted.N != 5 || o.Contacted.NoReorder != 3 || o.Holdout.N != 2 || o.Holdout.NoReorder != 2 || math.Abs(o.Diff+0.4) > 1e-12 || o.Sufficient {
		t.Errorf("effect %+v", o)
	}
	if !strings.Contains(o.Sentence, "too small") {
		t.Errorf("effect sentence %q", o.Sentence)
	}
	if e.Lists != 2 {
		t.Errorf("effect over %d matured lists, want 2", e.Lists)
	}
	if len(rep.Cohorts) != 1 || rep.Cohorts[0].Month != "2024-03" || rep.Cohorts[0].Size != 11 || !rep.Cohorts[0].Small {
		t.Errorf("cohorts %+v", rep.Cohorts)
	}
	stored, err := st.LatestOutcomes(ctx, id)
	if err != nil || !strings.Contains(string(stored.Report), `"list_id":`) {
		t.Errorf("stored report: %v", err)
	}
}
