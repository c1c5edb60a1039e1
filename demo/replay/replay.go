// Package replay gives the demo business a past: it imports the invented
// shop's orders in weekly rounds, drafting and publishing an at-risk list
// each week and applying the generator's simulated campaign effect to the
// contacted customers before the data moves on, then measures the
// outcomes. So `ebb serve --demo` shows realized accuracy and a measured
// effect on first start. The effect is simulated, and pages say so.
package replay

import (
	"bytes"
	"context"
	"fmt"
	"slices"
	"time"

	"ebb/demo"
	"ebb/internal/analysis"
	"ebb/internal/civil"
	"ebb/internal/history"
	"ebb/internal/store"
)

// Dataset is the name the demo is imported under.
const Dataset = "demo"

// The demo's past: a churn definition, models trained on the data up to
// the first list, then weekly lists published as the weeks went by, with
// the simulated campaign effect applied to the contacted customers of each
// before the data moves on. The last list is recent, so its results are
// not in yet.
var (
	// ListDates are the Mondays the demo's lists were drawn on.
	ListDates = []time.Time{
		date(2026, 6, 1), date(2026, 6, 8), date(2026, 6, 15), date(2026, 6, 22),
		date(2026, 6, 29), date(2026, 7, 6), date(2026, 7, 13), date(2026, 7, 20),
		date(2026, 10, 26),
	}
	effectNote = fmt.Sprintf("Demo data: the campaign effect here is simulated. Each time a customer was contacted they placed one extra order within the horizon with probability %.0f%%; customers on several weekly lists were contacted several times.", 100*demo.WinBackRate)
)

const (
	// WindowDays is the demo's churn window X (and horizon H).
	WindowDays    = 90
	listSize      = 400
	holdoutShare  = 0.15
	treatmentSeed = 7
	rationale     = "A quarter, the marketing team's planning cycle. It is shorter than the mean-gap (120 days) and censoring-aware (145 days) estimates, so customers are flagged sooner; the sensitivity table shows how many of them come back on their own."
)

func date(y int, m time.Month, d int) time.Time { return time.Date(y, m, d, 0, 0, 0, 0, time.UTC) }

// Result is what loading the demo's past did.
type Result struct {
	DatasetID int64
	Business  demo.Business // without the simulated extra orders
	Extra     []demo.Order  // the simulated extra orders
	Lists     []int64       // published lists, oldest first
}

// Load imports the demo business as the dataset "demo" in rounds: the orders up to
// each list date, a list drafted and published on it, the campaign effect
// simulated for its contacted customers, then on to the next date; finally
// the rest of the orders, and the outcomes measured.
func Load(ctx context.Context, st *store.Store, b demo.Business, now time.Time) (*Result, error) {
	out := &Result{Business: b}
	pending := slices.Clone(b.Orders)
	cache := history.NewCache(1)
	var customers bytes.Buffer
	if err := b.WriteCustomers(&customers); err != nil {
		return nil, err
	}
	// importThrough adds the pending orders dated up to day (all of them
	// when day is zero) as a new version, then sets data_through.
	importThrough := func(day time.Time) error {
		n := len(pending)
		if !day.IsZero() {
			n, _ = slices.BinarySearchFunc(pending, day.AddDate(0, 0, 1), func(o demo.Order, t time.Time) int { return o.Date.Compare(t) })
		}
		var orders bytes.Buffer
		if err := demo.WriteOrderList(&orders, pending[:n]); err != nil {
			return err
		}
		pending = pending[n:]
		req := analysis.ImportRequest{Dataset: Dataset, Append: out.DatasetID != 0, Orders: analysis.Source{Name: demo.OrdersFile, R: &orders}, Now: now}
		if out.DatasetID == 0 {
			req.Customers = &analysis.Source{Name: demo.CustomersFile, R: bytes.NewReader(customers.Bytes())}
		}
		res, err := analysis.Import(ctx, st, req)
		if err != nil {
			return err
		}
		out.DatasetID = res.Import.DatasetID
		var through *civil.Date
		if !day.IsZero() {
			d := civil.Of(day)
			through = &d
		}
		return st.SetDataThrough(ctx, out.DatasetID, through)
	}

	if err := importThrough(ListDates[0]); err != nil {
		return nil, fmt.Errorf("demo: first import: %w", err)
	}
	// A fixed salt, so every demo holds out the same customers and shows the
	// same figures (a real dataset keeps its random one).
	if err := st.SetSalt(ctx, out.DatasetID, []byte("Larkspur Refills demo holdout salt")); err != nil {
		return nil, err
	}
	if _, err := analysis.SaveDefinition(ctx, st, out.DatasetID, analysis.DefinitionInput{WindowDays: WindowDays, Method: "mean-gap", Rationale: rationale}, "demo", ListDates[0].Add(8*time.Hour)); err != nil {
		return nil, fmt.Errorf("demo: definition: %w", err)
	}
	truth := b.Truth() // no list has treated anyone before the first list date
	topt := analysis.TrainOptions{Truth: func(key string, day civil.Date, h int) float64 { return truth(key, day.Time(), h) }}
	if _, _, err := analysis.Train(ctx, st, cache, out.DatasetID, topt, "demo", ListDates[0].Add(8*time.Hour+30*time.Minute), nil); err != nil {
		return nil, fmt.Errorf("demo: train: %w", err)
	}
	share := holdoutShare
	for i, day := range ListDates {
		if i > 0 {
			if err := importThrough(day); err != nil {
				return nil, fmt.Errorf("demo: import through %s: %w", day.Format(time.DateOnly), err)
			}
		}
		res, err := analysis.Score(ctx, st, cache, analysis.ScoreRequest{DatasetID: out.DatasetID, Rule: analysis.ListRule{Size: listSize},
			Holdout: &share, Publish: true, By: "demo", Now: day.Add(9 * time.Hour)}, nil) // drafted and published on its date
		if err != nil {
			return nil, fmt.Errorf("demo: list of %s: %w", day.Format(time.DateOnly), err)
		}
		out.Lists = append(out.Lists, res.ListID)
		var contacted []string
		if err := st.EachListRow(ctx, out.DatasetID, res.ListID, []int{store.RowContact}, func(c store.ListedCustomer) error {
			contacted = append(contacted, c.Key)
			return nil
		}); err != nil {
			return nil, err
		}
		extra := b.Treat(contacted, day, WindowDays, treatmentSeed)
		out.Extra = append(out.Extra, extra...)
		pending = append(pending, extra...)
		slices.SortStableFunc(pending, func(a, c demo.Order) int { return a.Date.Compare(c.Date) })
	}
	if err := importThrough(time.Time{}); err != nil {
		return nil, fmt.Errorf("demo: last import: %w", err)
	}
	if err := analysis.MarkDemo(ctx, st, out.DatasetID, effectNote); err != nil {
		return nil, err
	}
	if _, err := analysis.Measure(ctx, st, cache, out.DatasetID, now, nil); err != nil {
		return nil, fmt.Errorf("demo: measure: %w", err)
	}
	return out, nil
}
