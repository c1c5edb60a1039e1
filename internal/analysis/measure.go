package analysis

import (
	"cmp"
	"context"
	"encoding/json"
	"fmt"
	"slices"
	"time"

	"ebb/internal/civil"
	"ebb/internal/history"
	"ebb/internal/jobs"
	"ebb/internal/lists"
	"ebb/internal/outcomes"
	"ebb/internal/problem"
	"ebb/internal/store"
)

// OutcomesReport is what a dataset's published lists turned out to be,
// measured on the orders imported since: each list's realized accuracy
// (once matured), the campaign effect, drift, and cohort retention. It is
// computed by a job and stored; pages read it.
type OutcomesReport struct {
	Dataset     string          `json:"dataset"`
	Version     int             `json:"version"`
	DataThrough string          `json:"data_through"`
	WindowDays  int             `json:"window_days"`
	HorizonDays int             `json:"horizon_days"`
	Lists       []ListOutcome   `json:"lists"` // published lists, newest first
	Effect      *EffectReport   `json:"effect,omitempty"`
	Cohorts     []CohortSummary `json:"cohorts"`
	// Attention lists what needs the analyst's eye, in plain sentences.
	Attention []string `json:"attention,omitempty"`
	// DemoNote is set on the demo dataset, whose campaign effect is
	// simulated.
	DemoNote string `json:"demo_note,omitempty"`
}

// ListOutcome is one published list's realized accuracy and drift.
type ListOutcome struct {
	ListID            int64              `json:"list_id"`
	AsOf              string             `json:"as_of"`
	Model             string             `json:"model"`
	Matured           bool               `json:"matured"`
	ReadyOn           string             `json:"ready_on"` // list date + H
	PromisedPrecision float64            `json:"promised_precision"`
	Accuracy          *outcomes.Accuracy `json:"accuracy,omitempty"`
	Note              string             `json:"note,omitempty"` // why there are no figures
	Drift             *Drift             `json:"drift,omitempty"`
	DriftVsPrevious   *float64           `json:"drift_vs_previous,omitempty"`
	Stability         outcomes.Stability `json:"stability,omitempty"`
	TopFeatures       []FeaturePSI       `json:"top_features,omitempty"`
}

// EffectReport is the campaign effect over every matured list.
type EffectReport struct {
	Lists   int                   `json:"lists"`
	Overall outcomes.Effect       `json:"overall"`
	ByBand  []outcomes.BandEffect `json:"by_band"`
}

// CohortSummary is one cohort's retention and time-to-lapse curve, ready
// to draw.
type CohortSummary struct {
	Month string    `json:"month"`
	Size  int       `json:"size"`
	Small bool      `json:"small"`
	Note  string    `json:"note,omitempty"`
	Share []float64 `json:"share"` // active share at each month end from the cohort's month
	// The Kaplan–Meier curve of the time to lapse: still-not-lapsed share
	// from day X[i] on, with its 95% band.
	X, Y, Lower, Upper []float64
}

// maxCohorts bounds the cohorts kept (the latest ones).
const maxCohorts = 36

// Measure computes and stores a dataset's outcomes report.
func Measure(ctx context.Context, st *store.Store, cache *Histories, datasetID int64, now time.Time, progress func(float64, string)) (*OutcomesReport, error) {
	if progress == nil {
		progress = func(float64, string) {}
	}
	d, err := st.DatasetByID(ctx, datasetID)
	if err != nil {
		return nil, err
	}
	def, err := st.CurrentDefinition(ctx, d.ID)
	if problem.Is(err, problem.NotFound) {
		return nil, problem.New(problem.Invalid, "dataset %q has no churn definition yet, so there is nothing to measure against", d.Name)
	} else if err != nil {
		return nil, err
	}
	progress(5, "loading the order history")
	h, err := loadHistory(ctx, st, cache, d)
	if err != nil {
		return nil, err
	}
	through := h.DataThrough()
	rep := &OutcomesReport{Dataset: d.Name, Version: d.Seq, DataThrough: through.String(), WindowDays: def.WindowDays, HorizonDays: def.HorizonDays}
	if note, err := st.Setting(ctx, demoNoteKey(d.ID)); err == nil {
		rep.DemoNote = note
	}
	ls, err := st.Lists(ctx, d.ID, false)
	if err != nil {
		return nil, err
	}
	progress(20, "lists")
	var selections []outcomes.Selection
	outcomeAt := map[[2]int32]bool{} // (customer, week) → no reorder within H of the week's list
	var prevCounts []int
	var prevModel int64
	for i := len(ls) - 1; i >= 0; i-- { // oldest first, for drift between consecutive lists
		l := ls[i]
		sum := SummaryOf(l)
		lo := ListOutcome{ListID: l.ID, AsOf: l.AsOf.String(), Model: sum.Model, PromisedPrecision: sum.ExpectedPrecision,
			ReadyOn: (l.AsOf + civil.Date(sum.HorizonDays)).String(), Matured: l.AsOf+civil.Date(sum.HorizonDays) <= through, Drift: sum.Drift}
		if sum.Drift != nil {
			lo.Stability = outcomes.Band(sum.Drift.ScorePSI)
			lo.TopFeatures = topFeatures(sum.Drift.Features, 3)
			if prevCounts != nil && prevModel == sum.ModelID {
				if p, err := outcomes.PSI(prevCounts, sum.Drift.ScoreCounts, outcomes.Epsilon); err == nil {
					lo.DriftVsPrevious = &p
				}
			}
			prevCounts, prevModel = sum.Drift.ScoreCounts, sum.ModelID
		}
		if !lo.Matured {
			lo.Note = fmt.Sprintf("Results will be ready once orders through %s are imported (the list date plus the %d-day horizon).", lo.ReadyOn, sum.HorizonDays)
			rep.Lists = append(rep.Lists, lo)
			continue
		}
		hold := lists.Holdout{Salt: d.Salt, Share: sum.HoldoutShare, PeriodDays: lists.PeriodDays(sum.HorizonDays)}
		period := hold.Period(l.AsOf)
		member := hold.Members(period)
		var rows []outcomes.Scored
		err := st.EachListRow(ctx, d.ID, l.ID, []int{store.RowScored, store.RowContact, store.RowHoldout}, func(c store.ListedCustomer) error {
			no := h.CountIn(int(c.Customer), l.AsOf, l.AsOf+civil.Date(sum.HorizonDays)) == 0
			band := string(BandOf(c.Band))
			selected := c.Status == store.RowContact || c.Status == store.RowHoldout
			// Holdout members not selected were not contacted either: they
			// join the calibration.
			inHoldout := c.Status == store.RowHoldout || c.Status == store.RowScored && member(c.Key)
			rows = append(rows, outcomes.Scored{Probability: c.Probability, Selected: selected, Holdout: inHoldout, Band: band, NoReorder: no})
			if selected {
				week := weekStart(l.AsOf)
				selections = append(selections, outcomes.Selection{Customer: c.Customer, Period: period, Week: week,
					Contacted: c.Status == store.RowContact, Band: band})
				if _, ok := outcomeAt[[2]int32{c.Customer, int32(week)}]; !ok {
					outcomeAt[[2]int32{c.Customer, int32(week)}] = no
				}
			}
			return nil
		})
		if err != nil {
			return nil, err
		}
		if acc, err := outcomes.Realized(rows, sum.HorizonDays); err == nil {
			lo.Accuracy = &acc
		} else if p := problem.As(err); p != nil {
			lo.Note = p.Message
		} else {
			return nil, err
		}
		rep.Lists = append(rep.Lists, lo)
	}
	slices.Reverse(rep.Lists)

	progress(60, "campaign effect")
	if len(selections) > 0 {
		first, err := outcomes.FirstSelections(selections)
		if err != nil {
			return nil, err
		}
		members := make([]outcomes.Member, len(first))
		for i, s := range first {
			members[i] = s.Member(outcomeAt[[2]int32{s.Customer, int32(s.Week)}])
		}
		overall, bands, err := outcomes.MeasureEffect(members)
		if err != nil {
			return nil, err
		}
		n := 0
		for _, lo := range rep.Lists {
			if lo.Matured {
				n++
			}
		}
		rep.Effect = &EffectReport{Lists: n, Overall: overall, ByBand: bands}
	}

	progress(75, "cohorts")
	rep.Cohorts = cohortSummaries(h, def.WindowDays, through)
	rep.Attention = attention(rep)
	body, err := json.Marshal(rep)
	if err != nil {
		return nil, err
	}
	if err := st.SaveOutcomes(ctx, store.Outcomes{DatasetID: d.ID, VersionID: d.Version, Report: body, CreatedAt: now}); err != nil {
		return nil, err
	}
	progress(100, "done")
	return rep, nil
}

// weekStart is the Monday on or before d.
func weekStart(d civil.Date) civil.Date { return d - civil.Date((int(d.Weekday())+6)%7) }

func topFeatures(fs []FeaturePSI, n int) []FeaturePSI {
	s := slices.Clone(fs)
	slices.SortStableFunc(s, func(a, b FeaturePSI) int { return cmp.Compare(b.PSI, a.PSI) })
	return s[:min(n, len(s))]
}

func cohortSummaries(h *history.History, windowDays int, through civil.Date) []CohortSummary {
	days := make([][]civil.Date, h.Customers())
	for c := range days {
		days[c] = h.Days(c)
	}
	cs := outcomes.CohortTable(days, windowDays, through)
	if len(cs) > maxCohorts {
		cs = cs[len(cs)-maxCohorts:]
	}
	out := make([]CohortSummary, 0, len(cs))
	for _, c := range cs {
		s := CohortSummary{Month: c.Month, Size: c.Size, Small: c.Small, Note: c.Note}
		for _, r := range c.Retention {
			s.Share = append(s.Share, r.Share)
		}
		if c.Lapse != nil {
			for _, r := range c.Lapse.Rows() {
				s.X, s.Y, s.Lower, s.Upper = append(s.X, r.Time), append(s.Y, r.Surv), append(s.Lower, r.Lower), append(s.Upper, r.Upper)
			}
		}
		out = append(out, s)
	}
	return out
}

// attention says what needs the analyst's eye.
func attention(r *OutcomesReport) []string {
	var out []string
	if len(r.Lists) == 0 {
		return []string{"No list has been published yet: draft one on the Lists page."}
	}
	latest := r.Lists[0]
	switch latest.Stability {
	case outcomes.Investigate:
		out = append(out, fmt.Sprintf("The scores of the list of %s have shifted a lot from training (PSI %.2f): retrain the model.", latest.AsOf, latest.Drift.ScorePSI))
	case outcomes.Watch:
		out = append(out, fmt.Sprintf("The scores of the list of %s have shifted somewhat from training (PSI %.2f): watch the next lists, and retrain if it grows.", latest.AsOf, latest.Drift.ScorePSI))
	}
	for _, f := range latest.TopFeatures {
		if outcomes.Band(f.PSI) == outcomes.Investigate {
			out = append(out, fmt.Sprintf("The feature %s has shifted a lot since training (PSI %.2f).", f.Name, f.PSI))
		}
	}
	for _, lo := range r.Lists {
		if lo.Matured && lo.Accuracy != nil && lo.PromisedPrecision-lo.Accuracy.Precision.Hi > 0 {
			out = append(out, fmt.Sprintf("The list of %s promised a precision of %.0f%% but its holdout shows %.0f%% (interval %.0f–%.0f%%): check calibration and consider retraining.",
				lo.AsOf, 100*lo.PromisedPrecision, 100*lo.Accuracy.Precision.Rate, 100*lo.Accuracy.Precision.Lo, 100*lo.Accuracy.Precision.Hi))
			break
		}
	}
	if r.Effect != nil && !r.Effect.Overall.Sufficient {
		out = append(out, "The groups are still too small to measure the campaign effect: keep the holdout until more lists mature.")
	}
	return out
}

// demoNoteKey is the setting that marks a dataset's campaign as simulated.
func demoNoteKey(datasetID int64) string { return fmt.Sprintf("demo_note:%d", datasetID) }

// MarkDemo records that a dataset's campaign effect is simulated, with the
// note pages show beside it.
func MarkDemo(ctx context.Context, st *store.Store, datasetID int64, note string) error {
	return st.SetSetting(ctx, demoNoteKey(datasetID), note)
}

// KindMeasure is the job kind of measuring outcomes.
const KindMeasure = "measure"

// MeasureParams are a measure job's parameters.
type MeasureParams struct {
	DatasetID int64 `json:"dataset_id"`
}

// MeasureJob returns the job function that measures a dataset's outcomes.
func MeasureJob(st *store.Store, cache *Histories, now func() time.Time) jobs.Func {
	return func(ctx context.Context, j jobs.Job, p *jobs.Progress) ([]byte, error) {
		var params MeasureParams
		if err := json.Unmarshal(j.Params, &params); err != nil {
			return nil, fmt.Errorf("measure job %d: params: %w", j.ID, err)
		}
		if _, err := Measure(ctx, st, cache, params.DatasetID, now(), p.Set); err != nil {
			return nil, err
		}
		return json.Marshal(params)
	}
}
