package web

import (
	"context"
	"encoding/json"
	"fmt"
	"math"
	"net/http"
	"slices"
	"strconv"
	"strings"

	"github.com/go-chi/chi/v5"

	"ebb/internal/analysis"
	"ebb/internal/auth"
	"ebb/internal/charts"
	"ebb/internal/model"
	"ebb/internal/outcomes"
	"ebb/internal/problem"
	"ebb/internal/store"
	"ebb/web/views"
)

// outcomesReport returns a dataset's latest outcomes report and when it
// was measured; nil without error when none was measured yet.
func (s *Server) outcomesReport(r *http.Request, datasetID int64) (*analysis.OutcomesReport, string, error) {
	o, err := s.store.LatestOutcomes(r.Context(), datasetID)
	if problem.Is(err, problem.NotFound) {
		return nil, "The outcomes have not been measured yet.", nil
	}
	if err != nil {
		return nil, "", err
	}
	var rep analysis.OutcomesReport
	if err := json.Unmarshal(o.Report, &rep); err != nil {
		return nil, "", fmt.Errorf("outcomes report %d: %w", o.ID, err)
	}
	return &rep, fmt.Sprintf("Measured %s on dataset version %d (data through %s).", o.CreatedAt.UTC().Format("2006-01-02 15:04 UTC"), rep.Version, rep.DataThrough), nil
}

func (s *Server) handleOverview(w http.ResponseWriter, r *http.Request) {
	d, err := s.datasetParam(r)
	if err != nil {
		s.fail(w, r, err)
		return
	}
	u, _ := currentUser(r)
	analyst := u.Role.Allows(auth.Analyst)
	ctx := r.Context()
	v := views.OverviewView{Chrome: s.chrome(w, r, "Overview · "+d.Name, "overview"), DatasetID: d.ID, Dataset: d.Name, IsAnalyst: analyst}
	rep, measured, err := s.outcomesReport(r, d.ID)
	if err != nil {
		s.fail(w, r, err)
		return
	}
	v.Measured = measured
	link := func(path string) string {
		if analyst {
			return path
		}
		return ""
	}

	// The churn definition.
	def := views.OverviewCard{ID: "card-definition", Title: "Churn definition", Link: link(datasetPath(d.ID) + "/window"), LinkLabel: "The churn window"}
	cur, err := s.store.CurrentDefinition(ctx, d.ID)
	switch {
	case err == nil:
		def.Lines = []string{fmt.Sprintf("A customer counts as lapsed after %d silent days; lists look %d days ahead.", cur.WindowDays, cur.HorizonDays),
			fmt.Sprintf("Definition %d, saved %s by %s: %s", cur.Seq, cur.CreatedAt.UTC().Format("2006-01-02"), cur.CreatedBy, cur.Rationale)}
	case problem.Is(err, problem.NotFound):
		def.Lines = []string{"No churn definition has been saved yet."}
		v.Attention = append(v.Attention, "Derive the churn window and save a definition.")
	default:
		s.fail(w, r, err)
		return
	}
	v.Cards = append(v.Cards, def)

	// The model in use.
	mc := views.OverviewCard{ID: "card-model", Title: "Model in use", Link: link(datasetPath(d.ID) + "/models"), LinkLabel: "The models"}
	ms, err := s.store.ModelsBrief(ctx, d.ID)
	if err != nil {
		s.fail(w, r, err)
		return
	}
	if i := slices.IndexFunc(ms, func(m store.StoredModel) bool { return m.InUse }); i >= 0 {
		sum, err := s.modelSummary(ctx, ms[i])
		if err != nil {
			s.fail(w, r, err)
			return
		}
		mc.Lines = append(mc.Lines, fmt.Sprintf("%s (model %d, trained %s): ROC AUC %.3f on the test period.", ms[i].Name, ms[i].ID, ms[i].CreatedAt.UTC().Format("2006-01-02"), sum.ROCAUC.Estimate))
		for _, l := range sum.Lists {
			if l.Label == "top 10%" {
				mc.Lines = append(mc.Lines, fmt.Sprintf("Promised: of a top-10%% list, %s did not order again (precision); it held %s of those who did not (recall).",
					views.Percent(l.Precision), views.Percent(l.Recall)))
			}
		}
		if cur.ID != 0 && sum.definition != strconv.Itoa(cur.Seq) {
			v.Attention = append(v.Attention, "The churn definition changed after the model in use was trained: train again before the next list.")
		}
	} else {
		mc.Lines = []string{"No model is in use yet."}
		v.Attention = append(v.Attention, "Train models and choose one for the lists.")
	}
	v.Cards = append(v.Cards, mc)

	// The latest list.
	lc := views.OverviewCard{ID: "card-list", Title: "Latest list", Link: "/lists", LinkLabel: "All lists"}
	pub, err := s.store.LatestPublishedList(ctx, d.ID)
	switch {
	case err == nil:
		sum := s.summary(pub)
		lc.Lines = []string{fmt.Sprintf("Published %s, as of %s: %s customers to contact, %s held out.", pub.PublishedAt.UTC().Format("2006-01-02"), pub.AsOf,
			views.Count(sum.Contact), views.Count(sum.Holdout)),
			fmt.Sprintf("Expected: %s of the selected will not order again within %d days without outreach.", views.Percent(sum.ExpectedPrecision), sum.HorizonDays)}
		lc.Link, lc.LinkLabel = listPath(pub.ID), "Open the list"
	case problem.Is(err, problem.NotFound):
		lc.Lines = []string{"No list has been published yet."}
	default:
		s.fail(w, r, err)
		return
	}
	if analyst {
		if l, err := s.store.LatestList(ctx, d.ID); err == nil && !l.Published {
			v.Attention = append(v.Attention, fmt.Sprintf("A draft list of %s waits for review and publishing.", l.AsOf))
		}
	}
	v.Cards = append(v.Cards, lc)

	// The measured effect and drift.
	ec := views.OverviewCard{ID: "card-effect", Title: "Measured effect", Link: datasetPath(d.ID) + "/outcomes#effect", LinkLabel: "Outcomes"}
	dc := views.OverviewCard{ID: "card-drift", Title: "Drift", Link: datasetPath(d.ID) + "/outcomes#drift", LinkLabel: "Drift by list"}
	if rep != nil {
		v.DemoNote = rep.DemoNote
		if rep.Effect != nil {
			ec.Lines = []string{rep.Effect.Overall.Sentence, fmt.Sprintf("Over %d matured list%s.", rep.Effect.Lists, plural(rep.Effect.Lists))}
		} else {
			ec.Lines = []string{"No published list has matured yet: the effect shows once a list's horizon has passed."}
		}
		if len(rep.Lists) > 0 && rep.Lists[0].Drift != nil {
			lo := rep.Lists[0]
			dc.Tag = string(lo.Stability)
			dc.Lines = []string{fmt.Sprintf("The scores of the list of %s: PSI %.3f against training (%s).", lo.AsOf, lo.Drift.ScorePSI, stabilityWords(lo.Stability))}
		} else {
			dc.Lines = []string{"No list to compare with training yet."}
		}
		v.Attention = append(v.Attention, rep.Attention...)
		if rep.Version < d.Seq {
			v.Attention = append(v.Attention, fmt.Sprintf("Orders were imported after the outcomes were last measured (on version %d; the dataset is at version %d): measure them again.", rep.Version, d.Seq))
		}
	} else {
		ec.Lines = []string{"Not measured yet."}
		dc.Lines = []string{"Not measured yet."}
	}
	v.Cards = append(v.Cards, ec, dc)
	s.render(w, r, http.StatusOK, views.Overview(v))
}

// modelBrief is what the overview shows of a model: its test figures and
// the churn definition it was trained on.
type modelBrief struct {
	analysis.ModelReport
	definition string
}

// modelSummary decodes a model's summary and reads its churn definition
// from the stored model (kept: a model never changes).
func (s *Server) modelSummary(ctx context.Context, m store.StoredModel) (modelBrief, error) {
	if b, ok := s.briefs.get(m.ID); ok {
		return b, nil
	}
	var b modelBrief
	json.Unmarshal(m.Summary, &b.ModelReport)
	full, err := s.store.ModelByID(ctx, m.ID)
	if err != nil {
		return b, err
	}
	mod, err := model.Load(full.Model)
	if err != nil {
		return b, fmt.Errorf("model %d: %w", m.ID, err)
	}
	b.definition = mod.Meta.ChurnDefinitionVersion
	s.briefs.put(m.ID, b)
	return b, nil
}

func stabilityWords(st outcomes.Stability) string {
	switch st {
	case outcomes.Stable:
		return "stable"
	case outcomes.Watch:
		return "some change: watch"
	}
	return "a major shift: investigate and retrain"
}

func (s *Server) handleOutcomes(w http.ResponseWriter, r *http.Request) {
	d, err := s.datasetParam(r)
	if err != nil {
		s.fail(w, r, err)
		return
	}
	u, _ := currentUser(r)
	v := views.OutcomesView{Chrome: s.chrome(w, r, "Outcomes · "+d.Name, "overview"), DatasetID: d.ID, Dataset: d.Name,
		IsAnalyst: u.Role.Allows(auth.Analyst), ChartBase: datasetPath(d.ID) + "/outcomes"}
	rep, measured, err := s.outcomesReport(r, d.ID)
	if err != nil {
		s.fail(w, r, err)
		return
	}
	v.Measured = measured
	if rep == nil {
		v.CohortNote = "Cohorts appear once the outcomes are measured."
		s.render(w, r, http.StatusOK, views.Outcomes(v))
		return
	}
	v.HasReport, v.DemoNote = true, rep.DemoNote
	effectView(&v, rep)
	accuracyView(&v, rep)
	for _, lo := range rep.Lists {
		if lo.Drift == nil {
			v.Drift = append(v.Drift, []string{lo.AsOf, "—", "—", "", "The model was trained before references were kept."})
			continue
		}
		prev := "—"
		if lo.DriftVsPrevious != nil {
			prev = fmt.Sprintf("%.3f", *lo.DriftVsPrevious)
		}
		var fs []string
		for _, f := range lo.TopFeatures {
			fs = append(fs, fmt.Sprintf("%s %.3f", f.Name, f.PSI))
		}
		v.Drift = append(v.Drift, []string{lo.AsOf, fmt.Sprintf("%.3f", lo.Drift.ScorePSI), prev, stabilityWords(lo.Stability), strings.Join(fs, ", ")})
	}
	cohortView(&v, rep)
	s.render(w, r, http.StatusOK, views.Outcomes(v))
}

func effectView(v *views.OutcomesView, rep *analysis.OutcomesReport) {
	if rep.Effect == nil {
		v.EffectSentence = "No published list has matured yet, so the effect cannot be measured: a list's outcomes are known once its horizon has passed."
		return
	}
	e := rep.Effect.Overall
	v.EffectSentence = e.Sentence
	if !e.Sufficient {
		v.EffectWarning = "The groups are too small to tell an effect from chance yet."
	}
	group := func(name string, g outcomes.Group) []string {
		return []string{name, views.Count(g.N), views.Count(g.NoReorder), views.Percent(g.Rate)}
	}
	if e.Contacted.N+e.Holdout.N > 0 {
		v.EffectRows = [][]string{group("Contacted", e.Contacted), group("Holdout (not contacted)", e.Holdout)}
	}
	for _, b := range rep.Effect.ByBand {
		diff := b.Sentence
		if b.Sufficient {
			diff = fmt.Sprintf("%+.1f points (%+.1f to %+.1f)", 100*b.Diff, 100*b.Lo, 100*b.Hi)
		}
		v.EffectBands = append(v.EffectBands, []string{b.Band, fmt.Sprintf("%s of %s", views.Percent(b.Contacted.Rate), views.Count(b.Contacted.N)),
			fmt.Sprintf("%s of %s", views.Percent(b.Holdout.Rate), views.Count(b.Holdout.N)), diff})
	}
	// Bands in risk order, not by name.
	order := map[string]int{"high": 0, "medium": 1, "low": 2}
	slices.SortStableFunc(v.EffectBands, func(a, b []string) int { return order[a[0]] - order[b[0]] })
}

func accuracyView(v *views.OutcomesView, rep *analysis.OutcomesReport) {
	detailDone := false
	for _, lo := range rep.Lists {
		row := []string{lo.AsOf, "", views.Percent(lo.PromisedPrecision), "—", "—", ""}
		switch {
		case !lo.Matured:
			row[1] = "ready " + lo.ReadyOn
			row[5] = lo.Note
		case lo.Accuracy == nil:
			row[1] = "matured"
			row[5] = lo.Note
		default:
			a := lo.Accuracy
			row[1] = "matured"
			row[3] = fmt.Sprintf("%s of %s (%s–%s)", views.Percent(a.Precision.Rate), views.Count(a.Precision.N), views.Percent(a.Precision.Lo), views.Percent(a.Precision.Hi))
			row[4] = views.Percent(a.Recall)
			row[5] = a.CalibrationSentence
			if !detailDone {
				detailDone = true
				v.Detail = fmt.Sprintf("Calibration of the list of %s on its holdout", lo.AsOf)
				cal := func(label string, c outcomes.CalibrationRow) []string {
					return []string{label, views.Count(c.Realized.N), views.Percent(c.MeanPredicted),
						fmt.Sprintf("%s (%s–%s)", views.Percent(c.Realized.Rate), views.Percent(c.Realized.Lo), views.Percent(c.Realized.Hi))}
				}
				for _, b := range a.ByBand {
					v.ByBand = append(v.ByBand, cal(b.Band, b))
				}
				for _, b := range a.ByDecile {
					v.ByDecile = append(v.ByDecile, cal(fmt.Sprintf("%s–%s", views.Percent(b.Lower), views.Percent(b.Upper)), b))
				}
			}
		}
		v.Accuracy = append(v.Accuracy, row)
	}
}

// lapseCohorts are the cohorts drawn as curves: the latest ones with at
// least outcomes.MinCohort customers.
const lapseCohorts = 6

func cohortView(v *views.OutcomesView, rep *analysis.OutcomesReport) {
	if len(rep.Cohorts) == 0 {
		v.CohortNote = "No customer has an order on or before the data-through date yet."
		return
	}
	months := 0
	small := 0
	for _, c := range rep.Cohorts {
		months = max(months, len(c.Share))
		if c.Small {
			small++
		}
	}
	v.CohortHead = []string{"Cohort", "Customers"}
	for m := 0; m < months; m++ {
		v.CohortHead = append(v.CohortHead, fmt.Sprintf("month %d", m))
	}
	for _, c := range rep.Cohorts {
		row := []string{c.Month, views.Count(c.Size)}
		for _, sh := range c.Share {
			row = append(row, views.Percent(sh))
		}
		v.CohortRows = append(v.CohortRows, row)
	}
	v.CohortNote = fmt.Sprintf("The share of each cohort (customers by the month of their first order) with an order in the %d days before each month end.", rep.WindowDays)
	if small > 0 {
		v.CohortNote += fmt.Sprintf(" %d cohort%s with fewer than %d customers are shaky: one customer moves their share by more than five points.", small, plural(small), outcomes.MinCohort)
	}
	cv := lapseCurves(rep)
	if len(cv.Series) == 0 {
		return
	}
	v.CurveHead = []string{"Cohort"}
	for _, x := range cv.Points() {
		v.CurveHead = append(v.CurveHead, fmt.Sprintf("day %.0f", x))
	}
	for _, row := range cv.Rows() {
		v.CurveRows = append(v.CurveRows, append([]string{row.Label}, row.Texts...))
	}
}

func plural(n int) string {
	if n == 1 {
		return ""
	}
	return "s"
}

// retentionChart is the cohorts' retention as a heatmap.
func retentionChart(rep *analysis.OutcomesReport) charts.Heatmap {
	h := charts.Heatmap{Title: "Share of each cohort still active", XLabel: "months since the first order", YLabel: "cohort", Width: 860, Height: 560}
	months := 0
	for _, c := range rep.Cohorts {
		h.RowLabels = append(h.RowLabels, c.Month)
		h.Values = append(h.Values, c.Share)
		months = max(months, len(c.Share))
	}
	for m := 0; m < months; m++ {
		h.ColLabels = append(h.ColLabels, fmt.Sprint(m))
	}
	return h
}

// lapseCurves are time-to-lapse curves of up to lapseCohorts cohorts with
// at least outcomes.MinCohort customers, spread evenly from the oldest to
// the newest so that the chart shows how the curve changed.
func lapseCurves(rep *analysis.OutcomesReport) charts.Curves {
	cv := charts.Curves{Title: "Share of each cohort not yet lapsed", XLabel: "days since the first order", YLabel: "not lapsed", Width: 860, Height: 460}
	var big []analysis.CohortSummary
	for _, c := range rep.Cohorts {
		if !c.Small && len(c.X) > 0 {
			big = append(big, c)
		}
	}
	n := min(len(big), lapseCohorts)
	for k := 0; k < n; k++ {
		i := k * (len(big) - 1) / max(n-1, 1)
		c := big[i]
		cv.Series = append(cv.Series, charts.StepSeries{Name: c.Month, X: c.X, Y: c.Y, Lower: c.Lower, Upper: c.Upper, Start: 1})
		cv.MaxX = math.Max(cv.MaxX, c.X[len(c.X)-1])
	}
	return cv
}

func (s *Server) handleOutcomesChart(w http.ResponseWriter, r *http.Request) {
	d, err := s.datasetParam(r)
	if err != nil {
		s.fail(w, r, err)
		return
	}
	name, ext, _ := strings.Cut(chi.URLParam(r, "chart"), ".")
	if (name != "retention" && name != "lapse") || (ext != "svg" && ext != "png") {
		s.fail(w, r, problem.New(problem.NotFound, "there is no such chart"))
		return
	}
	rep, _, err := s.outcomesReport(r, d.ID)
	if err == nil && (rep == nil || len(rep.Cohorts) == 0) {
		err = problem.New(problem.NotFound, "the outcomes have not been measured yet")
	}
	if err != nil {
		s.fail(w, r, err)
		return
	}
	if name == "retention" {
		s.sendChart(w, r, ext, name, retentionChart(rep))
		return
	}
	cv := lapseCurves(rep)
	if len(cv.Series) == 0 {
		s.fail(w, r, problem.New(problem.NotFound, "no cohort is large enough to draw"))
		return
	}
	s.sendChart(w, r, ext, name, cv)
}

func (s *Server) handleMeasure(w http.ResponseWriter, r *http.Request) {
	u, _ := currentUser(r)
	d, err := s.datasetParam(r)
	if err != nil {
		s.fail(w, r, err)
		return
	}
	body, _ := json.Marshal(analysis.MeasureParams{DatasetID: d.ID})
	jid, err := s.jobs.Submit(r.Context(), analysis.KindMeasure, d.ID, body, u.Name)
	if err != nil {
		s.fail(w, r, err)
		return
	}
	seeOther(w, r, jobPath(jid))
}
