package analysis_test

import (
	"bytes"
	"context"
	"encoding/json"
	"math"
	"strings"
	"testing"
	"time"

	"ebb/demo"
	"ebb/internal/analysis"
	"ebb/internal/civil"
	"ebb/internal/frame"
	"ebb/internal/history"
	"ebb/internal/lists"
	"ebb/internal/model"
	"ebb/internal/problem"
	"ebb/internal/snapshots"
	"ebb/internal/store"
)

var scoreNow = time.Date(2026, 12, 1, 0, 0, 0, 0, time.UTC)

// listEnv is the demo business imported with its customers file, a 90-day
// definition and trained models (the trees in use).
type listEnv struct {
	st      *store.Store
	cache   *analysis.Histories
	dataset store.Dataset
	biz     demo.Business
}

func newListEnv(t *testing.T, models ...string) *listEnv {
	t.Helper()
	ctx := context.Background()
	st := mustOpenStore(t)
	biz := demo.Generate(demo.Options{})
	var orders, customers bytes.Buffer
	biz.WriteOrders(&orders)
	biz.WriteCustomers(&customers)
	c := source("customers.csv", customers.Bytes())
	res := mustImport(t, st, analysis.ImportRequest{Dataset: "demo", Orders: source("orders.csv", orders.Bytes()), Customers: &c, Now: scoreNow})
	if _, err := analysis.SaveDefinition(ctx, st, res.Import.DatasetID, analysis.DefinitionInput{WindowDays: 90, Rationale: "test"}, "test", scoreNow); err != nil {
		t.Fatal(err)
	}
	e := &listEnv{st: st, cache: history.NewCache(1), biz: biz}
	if len(models) > 0 {
		if _, _, err := analysis.Train(ctx, st, e.cache, res.Import.DatasetID, analysis.TrainOptions{Models: models, Bootstrap: 10}, "test", scoreNow, nil); err != nil {
			t.Fatal(err)
		}
	}
	e.dataset = mustDataset(t, st, "demo")
	return e
}

func (e *listEnv) score(t *testing.T, req analysis.ScoreRequest) *analysis.ScoreResult {
	t.Helper()
	req.DatasetID, req.By, req.Now = e.dataset.ID, "test", scoreNow
	res, err := analysis.Score(context.Background(), e.st, e.cache, req, nil)
	if err != nil {
		t.Fatal(err)
	}
	return res
}

func (e *listEnv) rows(t *testing.T, listID int64) []store.ListedCustomer {
	t.Helper()
	var out []store.ListedCustomer
	if err := e.st.EachListRow(context.Background(), e.dataset.ID, listID, nil, func(c store.ListedCustomer) error {
		out = append(out, c)
		return nil
	}); err != nil {
		t.Fatal(err)
	}
	return out
}

func (e *listEnv) inUse(t *testing.T) (store.StoredModel, *model.Model) {
	t.Helper()
	ms, err := e.st.Models(context.Background(), e.dataset.ID)
	if err != nil {
		t.Fatal(err)
	}
	for _, sm := range ms {
		if sm.InUse {
			m, err := model.Load(sm.Model)
			if err != nil {
				t.Fatal(err)
			}
			return sm, m
		}
	}
	t.Fatal("no model in use")
	return store.StoredModel{}, nil
}

// A list scores every active customer with the model's own predictions,
// bands and explains each, never selects a customer who may not be
// contacted, and holds out about the holdout share.
func TestScoreList(t *testing.T) {
	e := newListEnv(t, "baseline", "logistic", "trees")
	sm, m := e.inUse(t)
	res := e.score(t, analysis.ScoreRequest{Rule: analysis.ListRule{Size: 600}})
	sum := res.Summary
	rows := e.rows(t, res.ListID)

	// Every active customer is scored, with the model's own prediction.
	h, err := e.st.LoadHistory(context.Background(), e.dataset.Version)
	if err != nil {
		t.Fatal(err)
	}
	through := e.dataset.DataThrough()
	active := 0
	for c := 0; c < h.Customers(); c++ {
		if n := h.CountThrough(c, through); n > 0 && int(through-h.Days(c)[n-1]) < 90 {
			active++
		}
	}
	if len(rows) != active || sum.Active != active {
		t.Fatalf("%d rows, summary says %d active, the history has %d", len(rows), sum.Active, active)
	}
	opt := snapshots.Options{WindowDays: 90, HorizonDays: 90, Dates: []civil.Date{through}}
	if contains(m.Features, snapshots.FeatureBGNBD) {
		run, err := e.st.TrainingRunByID(context.Background(), sm.RunID)
		if err != nil {
			t.Fatal(err)
		}
		var rep analysis.TrainReport
		if err := json.Unmarshal(run.Report, &rep); err != nil || rep.BGNBD == nil {
			t.Fatalf("training report: %v, BG/NBD %v", err, rep.BGNBD)
		}
		opt.BGNBD = &rep.BGNBD.Params
	}
	tab, err := snapshots.Build(h, opt)
	if err != nil {
		t.Fatal(err)
	}
	fr := tableFrame(t, tab)
	want, err := m.Predict(fr)
	if err != nil {
		t.Fatal(err)
	}
	byCustomer := map[int32]float64{}
	for i, c := range tab.Customer {
		byCustomer[c] = want[i]
	}
	contactable := map[string]bool{}
	for _, c := range e.biz.Customers {
		contactable[c.Key] = c.Contactable
	}
	counts := map[int]int{}
	prev := math.Inf(1)
	for _, r := range rows {
		if got := r.Probability; math.Abs(got-byCustomer[r.Customer]) > 1e-12 {
			t.Fatalf("customer %s: stored %v, the model predicts %v", r.Key, got, byCustomer[r.Customer])
		}
		if r.Probability > prev {
			t.Fatalf("rank %d scores %v above rank %d's %v", r.Rank, r.Probability, r.Rank-1, prev)
		}
		prev = r.Probability
		if !contactable[r.Key] && r.Status != store.RowNotContactable {
			t.Fatalf("customer %s may not be contacted but has status %d", r.Key, r.Status)
		}
		if contactable[r.Key] && r.Status == store.RowNotContactable {
			t.Fatalf("customer %s is contactable but marked not", r.Key)
		}
		if want := analysis.BandOf(r.Band); lists.DefaultBands.Of(r.Probability) != want {
			t.Fatalf("customer %s: band %s for %v", r.Key, want, r.Probability)
		}
		if r.Reasons == "" && (r.Status == store.RowContact || r.Status == store.RowHoldout) {
			t.Fatalf("selected customer %s has no reasons", r.Key)
		}
		counts[r.Status]++
	}
	if counts[store.RowContact]+counts[store.RowHoldout] != 600 || sum.Contact != counts[store.RowContact] || sum.Holdout != counts[store.RowHoldout] {
		t.Fatalf("statuses %v, summary contact %d holdout %d", counts, sum.Contact, sum.Holdout)
	}
	if sum.NotContactable != counts[store.RowNotContactable] || sum.NotContactable == 0 {
		t.Errorf("not contactable: summary %d, rows %d (the demo has some)", sum.NotContactable, counts[store.RowNotContactable])
	}
	// About 10% of the 600 held out: within 4 binomial standard deviations.
	if sd := math.Sqrt(600 * 0.1 * 0.9); math.Abs(float64(sum.Holdout)-60) > 4*sd {
		t.Errorf("%d of 600 held out, want about 60", sum.Holdout)
	}
	if !(sum.ExpectedPrecision > 0 && sum.ExpectedPrecision < 1) || !(sum.MDE > 0 && sum.MDE < 1) {
		t.Errorf("expected precision %v, detectable effect %v", sum.ExpectedPrecision, sum.MDE)
	}
	// Drift against the training references: scored a little after the
	// latest slice, so small but measured for the score and every feature.
	if d := sum.Drift; d == nil || !(d.ScorePSI >= 0 && d.ScorePSI < 0.25) || len(d.Features) < 13 {
		t.Errorf("drift %+v", sum.Drift)
	}
	if math.Abs(sum.ExpectedNoReorders-sum.ExpectedPrecision*600) > 1e-6 {
		t.Errorf("expected no-reorders %v, precision %v × 600", sum.ExpectedNoReorders, sum.ExpectedPrecision)
	}
}

func contains(xs []string, x string) bool {
	for _, v := range xs {
		if v == x {
			return true
		}
	}
	return false
}

// tableFrame converts a snapshot table to a frame as training does.
func tableFrame(t *testing.T, tab *snapshots.Table) *frame.Frame {
	t.Helper()
	cols := make([][]float64, len(tab.Cols))
	for j, c := range tab.Cols {
		cols[j] = make([]float64, len(c))
		for i, v := range c {
			cols[j][i] = float64(v)
		}
	}
	days := make([]int32, len(tab.Date))
	for i, d := range tab.Date {
		days[i] = int32(d)
	}
	f, err := frame.FromColumns(tab.Names, cols, tab.Label, tab.Customer, days)
	if err != nil {
		t.Fatal(err)
	}
	return f
}

// Holdout membership belongs to the customer and the period: two lists in
// one period hold out the same customers, the share is even across bands,
// a customer held out on a published list stays held out on a list drawn
// in the next period before that horizon closes, and the second published
// list says what changed.
func TestHoldoutAcrossLists(t *testing.T) {
	e := newListEnv(t, "logistic")
	through := e.dataset.DataThrough()
	hold := lists.Holdout{PeriodDays: lists.PeriodDays(90)}
	// Two lists early and late in the period before data_through's, then
	// one 30 days into the next period (less than H after the second).
	period := hold.Period(through) - 1
	early, late := hold.PeriodStart(period)+1, hold.PeriodEnd(period)-20
	next := late + 30
	if hold.Period(next) != period+1 || next > through {
		t.Fatalf("dates %s, %s, %s do not fit the periods before %s", early, late, next, through)
	}
	all := analysis.ListRule{UseThreshold: true, Threshold: 0}
	held := func(res *analysis.ScoreResult) map[string]bool {
		out := map[string]bool{}
		for _, r := range e.rows(t, res.ListID) {
			if r.Status == store.RowHoldout {
				out[r.Key] = true
			}
		}
		return out
	}
	a := e.score(t, analysis.ScoreRequest{Rule: all, AsOf: &early})
	b := e.score(t, analysis.ScoreRequest{Rule: all, AsOf: &late})
	ha, hb := held(a), held(b)
	rowsB := e.rows(t, b.ListID)
	onA := map[string]bool{}
	for _, r := range e.rows(t, a.ListID) {
		onA[r.Key] = r.Status == store.RowContact || r.Status == store.RowHoldout
	}
	same := 0
	for _, r := range rowsB {
		if onA[r.Key] && (r.Status == store.RowContact || r.Status == store.RowHoldout) {
			same++
			if ha[r.Key] != hb[r.Key] {
				t.Fatalf("customer %s: held out on %s %v, on %s %v — same period", r.Key, early, ha[r.Key], late, hb[r.Key])
			}
		}
	}
	if same < 100 {
		t.Fatalf("only %d customers on both lists", same)
	}
	// Balanced across bands: each band's holdout share within 4 SD of 10%.
	byBand := map[int][2]int{}
	for _, r := range rowsB {
		if r.Status == store.RowContact || r.Status == store.RowHoldout {
			c := byBand[r.Band]
			c[0]++
			if r.Status == store.RowHoldout {
				c[1]++
			}
			byBand[r.Band] = c
		}
	}
	for band, c := range byBand {
		if n := float64(c[0]); n >= 100 && math.Abs(float64(c[1])-0.1*n) > 4*math.Sqrt(n*0.09) {
			t.Errorf("band %s: %d of %d held out, want about 10%%", analysis.BandOf(band), c[1], c[0])
		}
	}

	// Publish the late list; the list 30 days into the next period
	// withholds every customer it held out.
	ctx := context.Background()
	if err := e.st.PublishList(ctx, b.ListID, "test", scoreNow); err != nil {
		t.Fatal(err)
	}
	if err := e.st.PublishList(ctx, b.ListID, "test", scoreNow); !problem.Is(err, problem.Conflict) {
		t.Errorf("publishing twice: %v, want a conflict", err)
	}
	c := e.score(t, analysis.ScoreRequest{Rule: all, AsOf: &next, Publish: true})
	for _, r := range e.rows(t, c.ListID) {
		if hb[r.Key] && r.Status == store.RowContact {
			t.Fatalf("customer %s was held out on %s and is contacted on %s", r.Key, late, next)
		}
	}
	if c.Summary.HeldOver == 0 {
		t.Error("no customer was held over from the earlier list")
	}
	ch := c.Summary.Changes
	if ch == nil || ch.PreviousID != b.ListID || ch.Still+ch.Left != b.Summary.Selected || ch.Still+ch.New != c.Summary.Selected || ch.OrderedSince+ch.NoLongerAtRisk != ch.Left {
		t.Fatalf("changes %+v between %+v and %+v", ch, b.Summary, c.Summary)
	}
	if ch.OrderedSince == 0 {
		t.Error("nobody on the earlier list ordered in the 30 days after it")
	}
}

// Each bad request is a sentence and stores no list.
func TestScoreRefusals(t *testing.T) {
	ctx := context.Background()
	untrained := newListEnv(t)
	e := newListEnv(t, "logistic")
	beyond := e.dataset.DataThrough() + 1
	tests := []struct {
		name string
		env  *listEnv
		req  analysis.ScoreRequest
		want string
	}{
		{"no model in use", untrained, analysis.ScoreRequest{Rule: analysis.ListRule{Size: 10}}, "no model in use"},
		{"as-of beyond data_through", e, analysis.ScoreRequest{Rule: analysis.ListRule{Size: 10}, AsOf: &beyond}, "after the data runs through"},
		{"no size", e, analysis.ScoreRequest{}, "choose one way to size the list"},
		{"two sizes", e, analysis.ScoreRequest{Rule: analysis.ListRule{Size: 10, UseThreshold: true}}, "choose one way"},
		{"holdout too large", e, analysis.ScoreRequest{Rule: analysis.ListRule{Size: 10}, Holdout: ptr(0.8)}, "holdout share"},
		{"value without a save rate", e, analysis.ScoreRequest{Rule: analysis.ListRule{BestValue: true, Value: analysis.Value{CostPerContact: 1, KeptValue: 50}}}, "save rate"},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			tt.req.DatasetID, tt.req.Now = tt.env.dataset.ID, scoreNow
			_, err := analysis.Score(ctx, tt.env.st, tt.env.cache, tt.req, nil)
			if !problem.Is(err, problem.Invalid) || !strings.Contains(err.Error(), tt.want) {
				t.Fatalf("Score = %v, want a sentence with %q", err, tt.want)
			}
			if ls, _ := tt.env.st.Lists(ctx, tt.env.dataset.ID, true); len(ls) != 0 {
				t.Errorf("%d lists stored", len(ls))
			}
		})
	}
	// A definition saved after the model was trained.
	if _, err := analysis.SaveDefinition(ctx, e.st, e.dataset.ID, analysis.DefinitionInput{WindowDays: 120, Rationale: "longer"}, "test", scoreNow); err != nil {
		t.Fatal(err)
	}
	_, err := analysis.Score(ctx, e.st, e.cache, analysis.ScoreRequest{DatasetID: e.dataset.ID, Rule: analysis.ListRule{Size: 10}, Now: scoreNow}, nil)
	if !problem.Is(err, problem.Invalid) || !strings.Contains(err.Error(), "train again") {
		t.Errorf("after a new definition: %v", err)
	}
}

// With data_through set long after the last order nobody is active.
func TestScoreNobodyActive(t *testing.T) {
	ctx := context.Background()
	e := newListEnv(t, "logistic")
	later := e.dataset.LastDay + 200
	if err := e.st.SetDataThrough(ctx, e.dataset.ID, &later); err != nil {
		t.Fatal(err)
	}
	_, err := analysis.Score(ctx, e.st, e.cache, analysis.ScoreRequest{DatasetID: e.dataset.ID, Rule: analysis.ListRule{Size: 10}, Now: scoreNow}, nil)
	if !problem.Is(err, problem.Invalid) || !strings.Contains(err.Error(), "no customer is active") {
		t.Errorf("Score = %v, want a sentence saying nobody is active", err)
	}
}

func ptr[T any](v T) *T { return &v }
