package analysis

import (
	"context"
	"encoding/json"
	"fmt"
	"math"
	"slices"
	"strconv"
	"time"

	"ebb/internal/civil"
	"ebb/internal/frame"
	"ebb/internal/history"
	"ebb/internal/jobs"
	"ebb/internal/lists"
	"ebb/internal/model"
	"ebb/internal/outcomes"
	"ebb/internal/problem"
	"ebb/internal/snapshots"
	"ebb/internal/store"
)

// ListRule says how many customers a list takes: the Size highest-risk
// eligible customers, every one scoring at least Threshold, or — with
// BestValue — every one whose expected value of contact is positive:
// p·SaveRate·KeptValue > CostPerContact, the expected-value model of the
// models page applied to each customer's calibrated probability.
type ListRule struct {
	Size         int     `json:"size,omitempty"`
	Threshold    float64 `json:"threshold,omitempty"`
	UseThreshold bool    `json:"use_threshold,omitempty"`
	BestValue    bool    `json:"best_value,omitempty"`
	Value        Value   `json:"value,omitzero"`
}

// lists turns the rule into lists' rule.
func (r ListRule) lists() (lists.Rule, error) {
	n := 0
	for _, set := range []bool{r.Size != 0, r.UseThreshold, r.BestValue} {
		if set {
			n++
		}
	}
	if n != 1 {
		return lists.Rule{}, problem.New(problem.Invalid, "choose one way to size the list: a number of customers, a probability threshold or the best expected value")
	}
	if r.BestValue {
		if err := r.Value.Check(); err != nil {
			return lists.Rule{}, err
		}
		if r.Value.SaveRate*r.Value.KeptValue <= 0 {
			return lists.Rule{}, problem.New(problem.Invalid, "with a save rate or kept value of zero no contact pays; give both to size the list by expected value")
		}
		return lists.Rule{UseThreshold: true, Threshold: min(r.Value.CostPerContact/(r.Value.SaveRate*r.Value.KeptValue), 1)}, nil
	}
	return lists.Rule{Size: r.Size, Threshold: r.Threshold, UseThreshold: r.UseThreshold}, nil
}

// Describe says the rule in words.
func (r ListRule) Describe() string {
	switch {
	case r.BestValue:
		return fmt.Sprintf("every customer worth contacting at cost %s, kept value %s and save rate %s",
			strconv.FormatFloat(r.Value.CostPerContact, 'f', -1, 64), strconv.FormatFloat(r.Value.KeptValue, 'f', -1, 64), pct(r.Value.SaveRate))
	case r.UseThreshold:
		return fmt.Sprintf("every customer with a probability of at least %s", pct(r.Threshold))
	}
	return fmt.Sprintf("the %d highest-risk customers", r.Size)
}

func pct(p float64) string { return strconv.FormatFloat(p*100, 'f', -1, 64) + "%" }

// ScoreRequest asks for a list.
type ScoreRequest struct {
	DatasetID int64
	ModelID   int64       // 0: the model in use
	AsOf      *civil.Date // nil: the dataset's data_through
	Rule      ListRule
	// Holdout is the holdout share, 0–0.5; nil means DefaultHoldout.
	Holdout *float64
	Bands   lists.Bands // zero: lists.DefaultBands
	Publish bool
	By      string
	Now     time.Time
}

// DefaultHoldout is the share of customers held out when none is given.
const DefaultHoldout = 0.1

// ListSummary is what a list page shows before and after publishing; it is
// stored with the list.
type ListSummary struct {
	Dataset     string      `json:"dataset"`
	Model       string      `json:"model"`
	ModelID     int64       `json:"model_id"`
	Definition  int         `json:"definition"`
	WindowDays  int         `json:"window_days"`
	HorizonDays int         `json:"horizon_days"`
	Rule        ListRule    `json:"rule"`
	RuleText    string      `json:"rule_text"`
	Bands       lists.Bands `json:"bands"`
	// The holdout: share, period and its dates.
	HoldoutShare float64 `json:"holdout_share"`
	Period       int     `json:"period"`
	PeriodFrom   string  `json:"period_from"`
	PeriodTo     string  `json:"period_to"`
	// Counts: every active customer scored; those who may not be contacted;
	// the eligible rest; the selected, split into contacted and holdout;
	// HeldOver counts selected customers withheld because a list in the
	// last H days held them out.
	Active         int `json:"active"`
	NotContactable int `json:"not_contactable"`
	Eligible       int `json:"eligible"`
	Selected       int `json:"selected"`
	Contact        int `json:"contact"`
	Holdout        int `json:"holdout"`
	HeldOver       int `json:"held_over"`
	// Selected per band: high, medium, low.
	BandCounts [3]int `json:"band_counts"`
	// Expected figures among the selected, from the calibrated scores.
	ExpectedNoReorders float64 `json:"expected_no_reorders"`
	ExpectedPrecision  float64 `json:"expected_precision"`
	// MDE is the smallest difference in no-reorder rate the holdout can
	// detect (80% power, 5% two-sided); 0 with MDENote when it cannot.
	MDE     float64 `json:"mde"`
	MDENote string  `json:"mde_note,omitempty"`
	// Changes since the previous published list (nil for the first).
	Changes *ListChanges `json:"changes,omitempty"`
	// Drift against the model's training references (nil for a model
	// trained before they were kept).
	Drift      *Drift   `json:"drift,omitempty"`
	Attributes []string `json:"attributes,omitempty"`
}

// ListChanges compares the selected customers with the previous published
// list's: New were not on it, Still were, Left were on it and are not now —
// split into those who ordered since its date and the rest (no longer
// among the highest risks, or no longer active).
type ListChanges struct {
	PreviousID     int64  `json:"previous_id"`
	PreviousAsOf   string `json:"previous_as_of"`
	New            int    `json:"new"`
	Still          int    `json:"still"`
	Left           int    `json:"left"`
	OrderedSince   int    `json:"ordered_since"`
	NoLongerAtRisk int    `json:"no_longer_at_risk"`
}

// ScoreResult is a stored list.
type ScoreResult struct {
	ListID    int64        `json:"list_id"`
	DatasetID int64        `json:"dataset_id"`
	Published bool         `json:"published"`
	Summary   *ListSummary `json:"summary"`
}

// Score scores every active customer of a dataset as of a date with a
// model, bands them, gives each up to three reasons, removes those who may
// not be contacted, selects by the rule, withholds the holdout, and stores
// every score as a draft list (published at once when asked).
func Score(ctx context.Context, st *store.Store, cache *Histories, req ScoreRequest, progress func(pct float64, note string)) (*ScoreResult, error) {
	if progress == nil {
		progress = func(float64, string) {}
	}
	rule, err := req.Rule.lists()
	if err != nil {
		return nil, err
	}
	bands := req.Bands
	if bands == (lists.Bands{}) {
		bands = lists.DefaultBands
	}
	if err := bands.Validate(); err != nil {
		return nil, err
	}
	share := DefaultHoldout
	if req.Holdout != nil {
		share = *req.Holdout
	}
	d, err := st.DatasetByID(ctx, req.DatasetID)
	if err != nil {
		return nil, err
	}
	def, err := st.CurrentDefinition(ctx, d.ID)
	if problem.Is(err, problem.NotFound) {
		return nil, problem.New(problem.Invalid, "dataset %q has no churn definition yet: derive the window, save a definition and train a model first", d.Name)
	} else if err != nil {
		return nil, err
	}
	sm, m, err := listModel(ctx, st, d, def, req.ModelID)
	if err != nil {
		return nil, err
	}
	through := d.DataThrough()
	asOf := through
	if req.AsOf != nil {
		asOf = *req.AsOf
	}
	if asOf > through {
		return nil, problem.New(problem.Invalid, "the list date %s is after the data runs through (%s): orders after it are not in yet", asOf, through)
	}
	if asOf < d.FirstDay {
		return nil, problem.New(problem.Invalid, "the list date %s is before the first order (%s)", asOf, d.FirstDay)
	}
	hold := lists.Holdout{Salt: d.Salt, Share: share, PeriodDays: lists.PeriodDays(def.HorizonDays)}
	if err := hold.Validate(); err != nil {
		return nil, err
	}

	progress(5, "loading the order history")
	h, err := loadHistory(ctx, st, cache, d)
	if err != nil {
		return nil, err
	}
	progress(20, "scoring the active customers")
	sopt := snapshots.Options{WindowDays: def.WindowDays, HorizonDays: def.HorizonDays, Dates: []civil.Date{asOf}}
	run, err := runReport(ctx, st, sm.RunID)
	if err != nil {
		return nil, err
	}
	if slices.Contains(m.Features, snapshots.FeatureBGNBD) {
		if run.BGNBD == nil {
			return nil, fmt.Errorf("training run %d: the model reads p_active_bgnbd but the run has no BG/NBD fit", sm.RunID)
		}
		sopt.BGNBD = &run.BGNBD.Params
	}
	tab, err := snapshots.Build(h, sopt)
	if err != nil {
		return nil, err
	}
	if tab.Rows() == 0 {
		return nil, problem.New(problem.Invalid, "no customer is active as of %s (none ordered in the %d days before), so there is nobody to list", asOf, def.WindowDays)
	}
	fr, err := toFrame(tab)
	if err != nil {
		return nil, err
	}
	probs, err := m.Predict(fr)
	if err != nil {
		return nil, fmt.Errorf("score list: %w", err)
	}
	var summary ModelReport
	if err := json.Unmarshal(sm.Summary, &summary); err != nil {
		return nil, fmt.Errorf("model %d: summary: %w", sm.ID, err)
	}
	drift, err := listDrift(summary.ScoreReference, run.FeatureReferences, probs, fr)
	if err != nil {
		return nil, fmt.Errorf("drift: %w", err)
	}
	progress(70, "selecting")
	contacts, err := st.CustomerContacts(ctx, d.ID)
	if err != nil {
		return nil, err
	}
	cands := make([]lists.Candidate, tab.Rows())
	tieKey := lists.TieKeys(d.Salt)
	for i, c := range tab.Customer {
		if int(c) >= len(contacts) {
			return nil, fmt.Errorf("score list: customer %d has no record", c)
		}
		cands[i] = lists.Candidate{Customer: c, Key: contacts[c].Key, Score: probs[i], TieKey: tieKey(contacts[c].Key),
			Contactable: contacts[c].Contactable}
	}
	// A customer held out on a published list in the last H days stays
	// untreated until that list's horizon closes, even across a period end.
	heldBefore, err := st.HeldOutSince(ctx, d.ID, asOf-civil.Date(def.HorizonDays)+1)
	if err != nil {
		return nil, err
	}
	period := hold.Period(asOf)
	member := hold.Members(period)
	heldOver := 0
	byKey := make(map[string]int32, len(heldBefore))
	for c := range heldBefore {
		byKey[contacts[c].Key] = c
	}
	sel, err := lists.Select(cands, rule, func(key string) bool {
		if member(key) {
			return true
		}
		if _, ok := byKey[key]; ok {
			heldOver++
			return true
		}
		return false
	})
	if err != nil {
		return nil, err
	}
	progress(60, "reasons")
	// Reasons for the selected customers: what a marketer reads. The other
	// scores are kept without.
	reasons, err := listReasons(m, fr, append(slices.Clone(sel.Contact), sel.Holdout...))
	if err != nil {
		return nil, err
	}
	status := make([]int, len(cands))
	for i, c := range cands {
		if !c.Contactable {
			status[i] = store.RowNotContactable
		}
	}
	for _, i := range sel.Contact {
		status[i] = store.RowContact
	}
	for _, i := range sel.Holdout {
		status[i] = store.RowHoldout
	}
	sum := &ListSummary{Dataset: d.Name, Model: sm.Name, ModelID: sm.ID, Definition: def.Seq, WindowDays: def.WindowDays, HorizonDays: def.HorizonDays,
		Rule: req.Rule, RuleText: req.Rule.Describe(), Bands: bands, HoldoutShare: share, Period: period,
		PeriodFrom: hold.PeriodStart(period).String(), PeriodTo: hold.PeriodEnd(period).String(),
		Drift: drift, Active: len(cands), NotContactable: sel.NotContactable, Eligible: sel.Eligible, Contact: len(sel.Contact), Holdout: len(sel.Holdout), HeldOver: heldOver}
	sum.Selected = sum.Contact + sum.Holdout
	rows := make([]store.ListRow, len(cands))
	for rank, i := range lists.Ranked(cands) {
		b := bandIndex(bands.Of(probs[i]))
		rows[rank] = store.ListRow{Rank: rank + 1, Customer: cands[i].Customer, Probability: probs[i], Band: b, Status: status[i], Reasons: reasons[i]}
		if status[i] == store.RowContact || status[i] == store.RowHoldout {
			sum.BandCounts[2-b]++
			sum.ExpectedNoReorders += probs[i]
		}
	}
	if sum.Selected > 0 {
		sum.ExpectedPrecision = sum.ExpectedNoReorders / float64(sum.Selected)
	}
	sum.MDE, sum.MDENote = detectable(sum.Contact, sum.Holdout, sum.ExpectedPrecision)
	if sum.Attributes, err = st.AttributeNames(ctx, d.ID); err != nil {
		return nil, err
	}
	if sum.Changes, err = listChanges(ctx, st, d.ID, h, rows); err != nil {
		return nil, err
	}
	progress(85, "saving")
	body, err := json.Marshal(sum)
	if err != nil {
		return nil, err
	}
	id, err := st.InsertList(ctx, store.List{DatasetID: d.ID, VersionID: d.Version, ModelID: sm.ID, AsOf: asOf, DataThrough: through,
		Summary: body, CreatedBy: req.By, CreatedAt: req.Now}, rows)
	if err != nil {
		return nil, err
	}
	if req.Publish {
		if err := st.PublishList(ctx, id, req.By, req.Now); err != nil {
			return nil, err
		}
	}
	progress(100, "done")
	return &ScoreResult{ListID: id, DatasetID: d.ID, Published: req.Publish, Summary: sum}, nil
}

// listModel loads the model a list uses and refuses one trained on an
// older churn definition.
func listModel(ctx context.Context, st *store.Store, d store.Dataset, def store.Definition, id int64) (store.StoredModel, *model.Model, error) {
	var sm store.StoredModel
	var err error
	if id != 0 {
		if sm, err = st.ModelByID(ctx, id); err != nil {
			return sm, nil, err
		}
		if sm.DatasetID != d.ID {
			return sm, nil, problem.New(problem.NotFound, "model %d belongs to another dataset", id)
		}
	} else {
		ms, err := st.Models(ctx, d.ID)
		if err != nil {
			return sm, nil, err
		}
		i := slices.IndexFunc(ms, func(m store.StoredModel) bool { return m.InUse })
		if i < 0 {
			return sm, nil, problem.New(problem.Invalid, "dataset %q has no model in use: train models and choose one with \"Use for lists\"", d.Name)
		}
		sm = ms[i]
	}
	m, err := model.Load(sm.Model)
	if err != nil {
		return sm, nil, fmt.Errorf("model %d: %w", sm.ID, err)
	}
	if m.Meta.ChurnDefinitionVersion != strconv.Itoa(def.Seq) {
		return sm, nil, problem.New(problem.Invalid, "the churn definition changed after model %d was trained (it used definition %s, the current one is %d): train again before drafting a list",
			sm.ID, m.Meta.ChurnDefinitionVersion, def.Seq)
	}
	return sm, m, nil
}

// runReport reads a training run's report.
func runReport(ctx context.Context, st *store.Store, runID int64) (*TrainReport, error) {
	run, err := st.TrainingRunByID(ctx, runID)
	if err != nil {
		return nil, err
	}
	var rep TrainReport
	if err := json.Unmarshal(run.Report, &rep); err != nil {
		return nil, fmt.Errorf("training run %d: %w", runID, err)
	}
	return &rep, nil
}

// listReasons gives the given rows up to three reasons each from the
// model's per-feature contributions (computed on every row: occlusion
// compares with the medians of all scored customers); other rows get none.
func listReasons(m *model.Model, fr *frame.Frame, rows []int) ([]string, error) {
	_, contrib, err := m.Contributions(fr)
	if err != nil {
		return nil, fmt.Errorf("reasons: %w", err)
	}
	names := fr.Names()
	p := len(m.Features)
	// The model's features by column of the frame.
	at := make([]int, len(names))
	for j, n := range names {
		at[j] = slices.Index(m.Features, n)
	}
	out := make([]string, fr.Rows())
	values := make([]float64, len(names))
	cs := make([]float64, len(names))
	cols := make([][]float64, len(names))
	for j := range names {
		cols[j] = fr.ColAt(j)
	}
	for _, i := range rows {
		for j := range names {
			values[j] = cols[j][i]
			cs[j] = 0
			if at[j] >= 0 {
				cs[j] = contrib[i*p+at[j]]
			}
		}
		out[i] = lists.JoinReasons(lists.Reasons(names, values, cs, 3))
	}
	return out, nil
}

// bandIndex stores a band as 0 low, 1 medium, 2 high.
func bandIndex(b lists.Band) int {
	switch b {
	case lists.High:
		return 2
	case lists.Medium:
		return 1
	}
	return 0
}

// BandOf reads a stored band.
func BandOf(i int) lists.Band {
	return [...]lists.Band{lists.Low, lists.Medium, lists.High}[min(max(i, 0), 2)]
}

// detectable is the smallest effect the holdout can detect at the mean
// calibrated score as the base rate, or a sentence saying why there is none.
func detectable(contact, holdout int, base float64) (float64, string) {
	if holdout == 0 {
		return 0, "With no holdout, this list cannot show whether contacting customers changed anything."
	}
	if contact == 0 {
		return 0, "Every selected customer is in the holdout, so nobody is contacted."
	}
	mde, err := outcomes.MinDetectableEffect(contact, holdout, base, 0.05, 0.8)
	if err != nil {
		return 0, fmt.Sprintf("With %d contacted and %d held out, no effect on the no-reorder rate could be told from chance.", contact, holdout)
	}
	return mde, ""
}

// listChanges compares the selection with the previous published list's.
func listChanges(ctx context.Context, st *store.Store, datasetID int64, h *history.History, rows []store.ListRow) (*ListChanges, error) {
	prev, err := st.LatestPublishedList(ctx, datasetID)
	if problem.Is(err, problem.NotFound) {
		return nil, nil
	} else if err != nil {
		return nil, err
	}
	before, err := st.ListCustomers(ctx, prev.ID, store.RowContact, store.RowHoldout)
	if err != nil {
		return nil, err
	}
	now := map[int32]bool{}
	for _, r := range rows {
		if r.Status == store.RowContact || r.Status == store.RowHoldout {
			now[r.Customer] = true
		}
	}
	ch := &ListChanges{PreviousID: prev.ID, PreviousAsOf: prev.AsOf.String()}
	was := map[int32]bool{}
	for _, c := range before {
		was[c] = true
		if now[c] {
			ch.Still++
			continue
		}
		ch.Left++
		if h.CountIn(int(c), prev.AsOf, civil.Date(math.MaxInt32)) > 0 {
			ch.OrderedSince++
		} else {
			ch.NoLongerAtRisk++
		}
	}
	for c := range now {
		if !was[c] {
			ch.New++
		}
	}
	return ch, nil
}

// KindScore is the job kind of drafting a list.
const KindScore = "score"

// ScoreJob returns the job function that drafts (or publishes) a list;
// its parameters are a ScoreRequest as JSON.
func ScoreJob(st *store.Store, cache *Histories, now func() time.Time) jobs.Func {
	return func(ctx context.Context, j jobs.Job, p *jobs.Progress) ([]byte, error) {
		var req ScoreRequest
		if err := json.Unmarshal(j.Params, &req); err != nil {
			return nil, fmt.Errorf("score job %d: params: %w", j.ID, err)
		}
		req.By, req.Now = j.CreatedBy, now()
		res, err := Score(ctx, st, cache, req, p.Set)
		if err != nil {
			return nil, err
		}
		return json.Marshal(res)
	}
}

// SummaryOf decodes a stored list's summary; a damaged one reads as empty
// figures.
func SummaryOf(l store.List) ListSummary {
	var sum ListSummary
	json.Unmarshal(l.Summary, &sum)
	return sum
}
