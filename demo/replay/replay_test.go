package replay

import (
	"context"
	"encoding/json"
	"path/filepath"
	"testing"
	"time"

	"ebb/demo"
	"ebb/internal/analysis"
	"ebb/internal/civil"
	"ebb/internal/lists"
	"ebb/internal/store"
)

// The demo's past holds published weekly lists whose outcomes are measured
// on first start, and the measured campaign effect's 95% interval covers
// the effect the generator simulated on the same customers.
func TestDemoHistory(t *testing.T) {
	ctx := context.Background()
	now := time.Date(2026, 12, 1, 0, 0, 0, 0, time.UTC)
	st, err := store.Open(ctx, filepath.Join(t.TempDir(), "demo.db"), store.Options{Now: func() time.Time { return now }})
	if err != nil {
		t.Fatal(err)
	}
	defer st.Close()
	b := demo.Generate(demo.Options{})
	h, err := Load(ctx, st, b, now)
	if err != nil {
		t.Fatal(err)
	}
	if len(h.Lists) != len(ListDates) || len(h.Extra) == 0 {
		t.Fatalf("%d lists, %d extra orders", len(h.Lists), len(h.Extra))
	}
	o, err := st.LatestOutcomes(ctx, h.DatasetID)
	if err != nil {
		t.Fatal(err)
	}
	var rep analysis.OutcomesReport
	if err := json.Unmarshal(o.Report, &rep); err != nil {
		t.Fatal(err)
	}
	if rep.DemoNote == "" || rep.Effect == nil || rep.DataThrough != "2026-10-31" {
		t.Fatalf("report: note %q, effect %v, through %s", rep.DemoNote, rep.Effect, rep.DataThrough)
	}
	matured := 0
	for _, lo := range rep.Lists {
		if lo.Matured {
			matured++
			if lo.Accuracy == nil {
				t.Errorf("matured list of %s has no accuracy: %s", lo.AsOf, lo.Note)
			}
		} else if lo.AsOf != "2026-10-26" {
			t.Errorf("list of %s is not matured", lo.AsOf)
		}
	}
	if matured != len(ListDates)-1 || rep.Effect.Lists != matured {
		t.Errorf("%d matured lists, effect over %d", matured, rep.Effect.Lists)
	}

	// The simulated effect on the contacted customers counted by the
	// measurement: each once, by the first list of a holdout period that
	// selected them; a would-be lapser turned into a reorder by an extra
	// order is the effect.
	base := map[string][]civil.Date{}
	for _, od := range b.Orders {
		base[od.CustomerKey] = append(base[od.CustomerKey], civil.Of(od.Date))
	}
	extra := map[string][]civil.Date{}
	for _, od := range h.Extra {
		extra[od.CustomerKey] = append(extra[od.CustomerKey], civil.Of(od.Date))
	}
	orderedIn := func(days []civil.Date, from, to civil.Date) bool {
		for _, d := range days {
			if d > from && d <= to {
				return true
			}
		}
		return false
	}
	hold := lists.Holdout{PeriodDays: lists.PeriodDays(WindowDays)}
	seen := map[[2]int]bool{}
	contacted, flipped := 0, 0
	for _, id := range h.Lists {
		l, err := st.ListByID(ctx, id)
		if err != nil {
			t.Fatal(err)
		}
		end := l.AsOf + civil.Date(WindowDays)
		if end > civil.Of(b.End) {
			continue
		}
		err = st.EachListRow(ctx, h.DatasetID, id, []int{store.RowContact, store.RowHoldout}, func(c store.ListedCustomer) error {
			k := [2]int{int(c.Customer), hold.Period(l.AsOf)}
			if seen[k] {
				return nil
			}
			seen[k] = true
			if c.Status == store.RowContact {
				contacted++
				if !orderedIn(base[c.Key], l.AsOf, end) && orderedIn(extra[c.Key], l.AsOf, end) {
					flipped++
				}
			}
			return nil
		})
		if err != nil {
			t.Fatal(err)
		}
	}
	e := rep.Effect.Overall
	simulated := -float64(flipped) / float64(contacted)
	t.Logf("contacted %d, flipped %d: simulated effect %.1f points; measured %.1f (%.1f to %.1f), holdout %d", contacted, flipped,
		100*simulated, 100*e.Diff, 100*e.Lo, 100*e.Hi, e.Holdout.N)
	if e.Contacted.N != contacted {
		t.Errorf("the measurement counts %d contacted customers, this test %d", e.Contacted.N, contacted)
	}
	if !e.Sufficient || simulated < e.Lo || simulated > e.Hi {
		t.Errorf("simulated effect %.4f outside the measured interval [%.4f, %.4f] (sufficient %v)", simulated, e.Lo, e.Hi, e.Sufficient)
	}
}
